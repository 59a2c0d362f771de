"""Simulated nights and simulated wearable reports (simulations with a known ground truth)."""

from __future__ import annotations

import itertools
from datetime import datetime, timedelta, timezone

import numpy as np
import pytest

import rrkit
from rrkit import InputError
from rrkit.simulate import NightSettings, simulate_night, simulate_wearable_reports

TZ = timezone(timedelta(hours=1))


def _hourly(night, width_s=600.0):
    t = night.interval_times_s
    edges = np.arange(0.0, night.duration_s + 1e-9, width_s)
    hr = []
    for a, b in itertools.pairwise(edges):
        sel = (t >= a) & (t < b)
        hr.append(60000.0 / night.rr_ms[sel].mean())
    return edges[:-1], np.array(hr)


def test_night_is_reproducible_and_seeded():
    a = simulate_night(duration_h=1, seed=7)
    b = simulate_night(duration_h=1, seed=7)
    c = simulate_night(duration_h=1, seed=8)
    np.testing.assert_array_equal(a.rr_ms, b.rr_ms)
    assert a.n_intervals != c.n_intervals or not np.array_equal(a.rr_ms, c.rr_ms)


def test_night_length_start_and_subject():
    start = datetime(2026, 2, 1, 22, 30, tzinfo=TZ)
    night = simulate_night(duration_h=2.5, seed=1, start=start, subject="X1")
    # the last interval ends within one interval of the asked length
    assert 2.5 * 3600 - 2.0 < night.duration_s <= 2.5 * 3600
    assert night.start == start
    assert night.subject == "X1"
    assert night.info.extra["simulated"] == "night"
    assert night.start.utcoffset() == timedelta(hours=1)


def test_night_course_has_sleep_like_shape():
    s = NightSettings(n_awakenings=(0, 0))  # no awakenings: look at the course alone
    night = simulate_night(duration_h=8, seed=3, settings=s)
    t, hr = _hourly(night)
    nadir_s = float(night.info.extra["nadir_s"])
    # heart rate at lights-off is above the settled level, the lowest 10-minute stretch lies in
    # the first half of the night near the planted nadir, and it rises again before waking
    assert hr[0] > np.median(hr) + 3
    lowest = t[np.argmin(hr)]
    assert 0.2 * 8 * 3600 <= lowest <= 0.6 * 8 * 3600
    assert abs(lowest - nadir_s) < 3600
    assert hr[-1] > hr.min() + 4
    # beat-to-beat variability in the plausible adult range (Nunan et al. 2010 report resting
    # RMSSD 42 +/- 15 ms; sleep is usually higher): plausibility only
    m = rrkit.metrics(night, domains=["time"])
    assert 25 < m["rmssd_ms"] < 120
    assert 45 < m["mean_hr_bpm"] < 70


def test_awakenings_raise_heart_rate():
    night = simulate_night(duration_h=6, seed=11,
                           settings=NightSettings(n_awakenings=(3, 3), awakening_min=(5, 6)))
    spans = [tuple(float(v) for v in part.split("-"))
             for part in night.info.extra["awakenings_s"].split(",")]
    assert len(spans) == 3
    t, rr = night.interval_times_s, night.rr_ms
    for a, b in spans:
        inside = rr[(t > a + 60) & (t < b - 60)].mean()
        around = rr[((t > a - 900) & (t < a - 300)) | ((t > b + 300) & (t < b + 900))].mean()
        # planted rise of 18 bpm (NightSettings.awakening_hr_bpm), smoothed at the edges
        assert 60000 / inside - 60000 / around > 10


def test_night_looks_artifact_free_to_the_cleaner():
    night = simulate_night(duration_h=2, seed=5)
    res = rrkit.clean(night)
    # a realistic series without planted artifacts: almost nothing flagged (the artifact
    # stage's own criterion for a clean series is <= 0.1%; we allow 0.5%)
    assert res.summary.artifact_pct <= 0.5


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"seed": 1, "start": datetime(2026, 1, 5, 23, 0)}, r"time-zone aware datetime"),
        ({"seed": 1, "duration_h": 0.1}, r"duration_h must be in \[0.25, 48\]"),
        ({"seed": "x"}, r"seed must be an int or a numpy Generator"),
    ],
)
def test_night_bad_arguments(kwargs, message):
    with pytest.raises(InputError, match=message):
        simulate_night(**kwargs)


def _nights(n_subjects=2, n_nights=2, hours=2.0):
    out = []
    for s in range(n_subjects):
        for d in range(n_nights):
            start = datetime(2026, 1, 5 + d, 23, 0, tzinfo=TZ)
            out.append(simulate_night(duration_h=hours, seed=10 * s + d, start=start,
                                      subject=f"S{s}"))
    return out


def test_wearable_reports_are_reference_plus_bias_and_noise():
    nights = _nights()
    exact = simulate_wearable_reports(nights, definition="whole-night", seed=1)
    # with no bias and no noise the report is the reference value itself, computed the obvious
    # way: clean the night, then RMSSD of the whole corrected night
    for rec, value in zip(nights, exact["rmssd_ms"], strict=True):
        assert value == pytest.approx(rrkit.metrics(rrkit.clean(rec))["rmssd_ms"], rel=1e-12)
    shifted = simulate_wearable_reports(nights, definition="whole-night", bias=4.0, seed=1)
    np.testing.assert_allclose(shifted["rmssd_ms"], exact["rmssd_ms"] + 4.0, rtol=1e-12)
    noisy = simulate_wearable_reports(nights, definition="whole-night", noise_sd=2.0, seed=1)
    assert not np.allclose(noisy["rmssd_ms"], exact["rmssd_ms"])
    assert list(exact.columns) == ["subject", "date", "rmssd_ms"]
    # the night is filed under the date of waking (last beat local date)
    assert list(exact["date"]) == ["2026-01-06", "2026-01-07", "2026-01-06", "2026-01-07"]


def test_wearable_reports_bad_arguments():
    nights = _nights(1, 1, 1.0)
    with pytest.raises(InputError, match=r"noise_sd must be in \[0, inf\]"):
        simulate_wearable_reports(nights, noise_sd=-1.0, seed=1)
    with pytest.raises(InputError, match=r"definition must be one of .*did you mean 'last-1h'"):
        simulate_wearable_reports(nights, definition="last-1hr", seed=1)
