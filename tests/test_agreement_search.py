"""Reference values from raw nights and the window-definition search (simulated ground truth)."""

from __future__ import annotations

from datetime import datetime, timedelta, timezone

import numpy as np
import pandas as pd
import pytest

import rrkit
from rrkit import InputError, ReferenceDefinition, reference_table, search_definitions
from rrkit.agreement import REFERENCE_DEFINITIONS, night_date
from rrkit.simulate import simulate_night, simulate_wearable_reports
from rrkit.windows import Sliding

TZ = timezone(timedelta(hours=1))
# the two cleaning settings of the grid used here (a smaller grid keeps the tests fast)
CLEANINGS = ["drr", "drr-drop"]


@pytest.fixture(scope="module")
def nights():
    """5 subjects x 3 nights of 2.5 h, lights-off 23:00 at UTC+01:00 (seeded)."""
    out = []
    for s in range(5):
        for d in range(3):
            start = datetime(2026, 1, 5 + d, 23, 0, tzinfo=TZ) + timedelta(minutes=7 * s)
            out.append(simulate_night(duration_h=2.5, seed=1000 + 10 * s + d, start=start,
                                      subject=f"P{s + 1}"))
    return out


@pytest.mark.parametrize(("hidden", "noise_sd"),
                         [("lowest-hr-30min", 1.0), ("last-1h", 1.0), ("tiles-5min", 0.2)])
def test_search_finds_hidden_definition_and_bias(nights, hidden, noise_sd):
    # simulation with a known truth: the wearable reports the hidden definition (cleaned with
    # drr) plus a bias of 3 ms and Gaussian noise; the mean of 5-minute RMSSDs tracks the
    # whole-night RMSSD so closely on these nights that only low noise tells them apart
    reported = simulate_wearable_reports(nights, definition=hidden, bias=3.0,
                                         noise_sd=noise_sd, seed=42)
    found = search_definitions(reported, nights, cleanings=CLEANINGS, progress=False)
    assert found.best[0] == hidden
    best = found.results[found.best]
    assert best.stats["bias_ci_low"] < 3.0 < best.stats["bias_ci_high"]
    # the noise SD is recovered roughly (15 pairs)
    assert 0.5 * noise_sd < best.stats["sd_diff"] < 1.6 * noise_sd
    # the table says how much closer the best is than the next definition
    ru = found.runner_up
    assert ru is not None
    assert ru[0] != hidden
    row = found.table[(found.table["definition"] == ru[0]) & (found.table["cleaning"] == ru[1])]
    assert float(row["sd_ratio_to_best"].iloc[0]) > 1.3
    assert f"Closest: {hidden}" in found.summary_text()
    if hidden != "tiles-5min":
        assert float(row["p_vs_best"].iloc[0]) < 0.05


def test_search_says_when_definitions_are_not_distinguishable(nights):
    # with 1 ms of noise the mean of 5-minute RMSSDs and the whole-night RMSSD are within noise
    # of each other on these nights: the search must not claim a clear winner
    reported = simulate_wearable_reports(nights, definition="tiles-5min", bias=3.0,
                                         noise_sd=1.0, seed=42)
    found = search_definitions(reported, nights, cleanings=["drr"], progress=False)
    assert found.best[0] in {"tiles-5min", "whole-night", "last-3h"}
    text = found.summary_text()
    assert "not clearly distinguishable" in text
    # 2.5-hour nights: the last 3 hours are the whole night, and the notes say so
    assert "last-3h gives the same reference values as whole-night for these nights" in text


def test_search_table_shape_and_unranked_definitions(nights):
    reported = simulate_wearable_reports(nights, definition="whole-night", bias=-2.0,
                                         noise_sd=0.5, seed=3)
    found = search_definitions(reported, nights, cleanings=["drr"], progress=False)
    t = found.table
    assert list(t["rank"].dropna()) == list(range(1, int(t["rank"].notna().sum()) + 1))
    assert t["sd_diff"].iloc[0] == t.loc[t["rank"].notna(), "sd_diff"].min()
    # 2.5-hour nights from 23:00 never reach 02:00-05:00: that definition pairs nothing
    assert any("clock-02-05" in note for note in found.notes)
    assert "clock-02-05" not in set(t["definition"])
    assert found.table["sd_ratio_to_best"].iloc[0] == 1.0


def test_reference_whole_night_is_metric_of_cleaned_night(nights):
    table = reference_table(nights[:3], definition="whole-night", clean="drr")
    for rec, value in zip(nights[:3], table["rmssd_ms"], strict=True):
        expected = rrkit.metrics(rrkit.clean(rec), domains=["time"])["rmssd_ms"]
        assert value == pytest.approx(expected, rel=1e-12)
    assert list(table["date"]) == ["2026-01-06", "2026-01-07", "2026-01-08"]


def _tiles(rec):
    """Obvious loop: consecutive 5-minute windows, each cleaned result sliced and measured."""
    cr = rrkit.clean(rec)
    t0, t1 = rec.beat_times_s[0], rec.beat_times_s[-1]
    out = []
    a = t0
    while a + 300.0 <= t1 + 1e-9:
        part = cr.window(a, a + 300.0)
        m = rrkit.metrics(part, domains=["time"])
        out.append((m["rmssd_ms"], m["mean_hr_bpm"], part.summary.quality))
        a += 300.0
    return out


def test_reference_tiles_and_lowest_hr_match_a_plain_loop(nights):
    rec = nights[4]
    tiles = _tiles(rec)
    ok = [v for v in tiles if v[2] == "ok"]
    mean_tiles = reference_table([rec], definition="tiles-5min")["rmssd_ms"].iloc[0]
    assert mean_tiles == pytest.approx(np.mean([v[0] for v in ok]), rel=1e-12)
    lowest6 = sorted(ok, key=lambda v: v[1])[:6]
    got = reference_table([rec], definition="lowest-hr-30min")["rmssd_ms"].iloc[0]
    assert got == pytest.approx(np.mean([v[0] for v in lowest6]), rel=1e-12)
    last = reference_table([rec], definition="last-1h")["rmssd_ms"].iloc[0]
    t1 = rec.beat_times_s[-1]
    expected = rrkit.metrics(rrkit.clean(rec).window(t1 - 3600.0, t1), domains=["time"])
    assert last == pytest.approx(expected["rmssd_ms"], rel=1e-12)


def test_custom_definition_and_other_metric(nights):
    d = ReferenceDefinition("lowest-hr-10min", Sliding(600.0), aggregate="lowest_hr",
                            description="the 10-minute window with the lowest heart rate")
    table = reference_table(nights[:2], definition=d, metric="mean_hr_bpm")
    assert table["definition"].tolist() == ["lowest-hr-10min"] * 2
    whole = reference_table(nights[:2], definition="whole-night", metric="mean_hr_bpm")
    # the lowest 10-minute heart rate is below the night's mean heart rate
    assert (table["mean_hr_bpm"] < whole["mean_hr_bpm"]).all()


def test_night_date_is_local_date_of_last_beat():
    start = datetime(2026, 3, 1, 22, 0, tzinfo=timezone(timedelta(hours=-5)))
    rec = simulate_night(duration_h=3, seed=2, start=start, subject="Q")
    assert night_date(rec).isoformat() == "2026-03-02"  # 01:00 local, although 06:00 UTC


def test_bad_nights_and_names(nights):
    with pytest.raises(InputError, match=r"subject 'P1' already has a night ending on "
                                         r"2026-01-06"):
        reference_table([nights[0], nights[0]])
    anon = nights[0].replace(subject=None)
    with pytest.raises(InputError, match=r"the night has no subject"):
        reference_table([anon])
    no_start = nights[0].replace(start=None)
    with pytest.raises(InputError, match=r"needs its absolute start time"):
        reference_table([no_start])
    with pytest.raises(InputError, match=r"definition must be one of .*did you mean"):
        reference_table(nights[:1], definition="tiles-5mn")
    with pytest.raises(InputError, match=r"metric must be a key of rrkit.metrics"):
        reference_table(nights[:1], metric="rmssd")
    reported = pd.DataFrame({"subject": ["P1"], "date": ["2026-01-06"], "x": [1.0]})
    with pytest.raises(InputError, match=r"has no column 'rmssd_ms'"):
        search_definitions(reported, nights[:1])


def test_builtin_definition_names_are_documented():
    for name, d in REFERENCE_DEFINITIONS.items():
        assert d.name == name
        assert d.description


def test_cleaning_choices_are_equivalent_spellings(nights):
    from rrkit import CleanSettings

    by_name = reference_table(nights[:2], definition="tiles-5min", clean="drr-drop")
    by_settings = reference_table(nights[:2], definition="tiles-5min",
                                  clean=CleanSettings(method="drr", strategy="drop"))
    by_kwargs = reference_table(nights[:2], definition="tiles-5min",
                                clean={"method": "drr", "strategy": "drop"})
    np.testing.assert_array_equal(by_name["rmssd_ms"], by_settings["rmssd_ms"])
    np.testing.assert_array_equal(by_name["rmssd_ms"], by_kwargs["rmssd_ms"])
    assert by_settings["cleaning"].iloc[0] == "drr/drop"
    assert reference_table(nights[:1], clean=None)["cleaning"].iloc[0] == "none"


def test_ratio_search_recovers_a_multiplicative_device(nights):
    # known truth: the device reads 15% high on the last hour, with no additive bias
    exact = simulate_wearable_reports(nights, definition="last-1h", seed=1)
    reported = exact.assign(rmssd_ms=exact["rmssd_ms"] * 1.15)
    found = search_definitions(reported, nights, cleanings=["drr"], ratio=True, progress=False)
    assert found.best[0] == "last-1h"
    s = found.results[found.best].stats
    assert s["bias"] == pytest.approx(1.15, rel=1e-9)  # exact: every ratio is 1.15
    assert any("log scale" in note for note in found.notes)
