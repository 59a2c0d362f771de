"""season-batch: placeholder until the daily batch lands."""
from __future__ import annotations

NAME = "season-batch"
DESCRIPTION = "12 subjects x 180 days of 6-min mornings via rrkit daily: --jobs 1 vs 2 vs neurokit2"


def run(cfg):
    raise RuntimeError("the daily batch (rrkit daily) is not available yet")
