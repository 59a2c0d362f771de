"""Window specs, the text syntax and their resolution against recordings."""

from __future__ import annotations

import itertools
from datetime import datetime, timedelta, timezone
from zoneinfo import ZoneInfo

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import rrkit
from rrkit.windows import (
    MORNING,
    BeforeEnd,
    ClockTime,
    Events,
    FromStart,
    Sliding,
    Whole,
    Window,
    parse_duration,
    parse_window,
    resolve_windows,
)

PARIS = ZoneInfo("Europe/Paris")


def _flat(duration_s: float, rr_ms: float = 1000.0, t0_s: float = 0.0, start=None):
    n = round(duration_s * 1000 / rr_ms)
    return rrkit.Recording.from_rr(np.full(n, rr_ms), t0_s=t0_s, start=start)


# --------------------------------------------------------------------------- basic specs
def test_morning_skips_a_minute_and_takes_five():
    rec = _flat(600)
    (w,) = resolve_windows(MORNING, rec)
    assert (w.label, w.start_s, w.end_s) == ("morning", 60.0, 360.0)
    assert not w.clipped
    assert rrkit.windows.MORNING is MORNING


def test_offsets_count_from_the_first_beat():
    rec = _flat(600, t0_s=12.5)
    (w,) = resolve_windows(FromStart(60, 300), rec)
    assert (w.start_s, w.end_s) == (72.5, 372.5)
    (w,) = resolve_windows(BeforeEnd(120), rec)
    assert w.end_s == pytest.approx(612.5)
    assert w.duration_s == pytest.approx(120)
    (w,) = resolve_windows(Whole(), rec)
    assert (w.start_s, w.end_s) == (12.5, 612.5)


def test_short_recording_clips_and_says_so():
    rec = _flat(200)
    (w,) = resolve_windows(MORNING, rec)
    assert (w.start_s, w.end_s) == (60.0, 200.0)
    assert w.clipped
    assert w.extra["requested_s"] == (60.0, 360.0)
    (w,) = resolve_windows(FromStart(500, 60), rec)  # entirely after the data: zero length
    assert w.duration_s == 0
    assert w.start_s == 200.0


def test_empty_recording_has_no_windows():
    empty = rrkit.Recording(np.zeros(0), np.zeros(0))
    for spec in (Whole(), MORNING, BeforeEnd(60), Sliding(60)):
        assert resolve_windows(spec, empty) == []


def test_sliding_windows_contiguous_and_overlapping():
    rec = _flat(3600)
    ws = resolve_windows(Sliding(300), rec)
    assert len(ws) == 12
    assert all(b.start_s == a.end_s for a, b in itertools.pairwise(ws))
    ws = resolve_windows(Sliding(300, 60), rec)
    assert len(ws) == 56
    assert ws[-1].end_s == 3600.0
    assert len({w.label for w in ws}) == len(ws)


# --------------------------------------------------------------------------- hypothesis
recordings = st.builds(
    lambda n, rr, t0: rrkit.Recording.from_rr(np.full(n, rr), t0_s=t0),
    st.integers(min_value=2, max_value=4000), st.floats(min_value=300, max_value=1500),
    st.floats(min_value=0, max_value=1e5))
specs = st.one_of(
    st.builds(FromStart, st.floats(0, 5000), st.one_of(st.none(), st.floats(1, 5000))),
    st.builds(BeforeEnd, st.floats(1, 5000)),
    st.builds(Sliding, st.floats(5, 2000), st.one_of(st.none(), st.floats(5, 2000)),
              st.booleans()),
    st.just(Whole()),
)


@settings(max_examples=150, deadline=None)
@given(rec=recordings, spec=specs)
def test_windows_never_exceed_the_recording(rec, spec):
    lo, hi = rec.beat_times_s[0], rec.beat_times_s[-1]
    for w in resolve_windows(spec, rec):
        assert lo <= w.start_s <= w.end_s <= hi


@settings(max_examples=150, deadline=None)
@given(rec=recordings, length=st.floats(5, 3000), step=st.floats(5, 3000))
def test_sliding_windows_tile_as_specified(rec, length, step):
    lo, hi = rec.beat_times_s[0], rec.beat_times_s[-1]
    ws = resolve_windows(Sliding(length, step), rec)
    if hi - lo + 1e-9 >= length:
        expected = int(np.floor((hi - lo - length) / step + 1e-9)) + 1
    else:
        expected = 0
    assert len(ws) == expected
    for k, w in enumerate(ws):
        assert w.start_s == pytest.approx(lo + k * step)
        assert w.duration_s == pytest.approx(length)
        assert not w.clipped
    if ws:  # no room left for one more full window
        assert ws[-1].start_s + step + length > hi - 1e-6
    # partial: every start lo + k step before the last beat, the tail clipped to the last beat
    part = resolve_windows(Sliding(length, step, partial=True), rec)
    assert part[: len(ws)] == ws
    assert len(part) >= 1
    for k, w in enumerate(part):
        assert w.start_s == pytest.approx(lo + k * step)
        assert w.end_s == pytest.approx(min(lo + k * step + length, hi))
    assert part[-1].start_s < hi
    assert part[-1].start_s + step >= hi - 1e-6


# --------------------------------------------------------------------------- clock windows
def test_clock_window_in_a_time_zone():
    # a recording starting 22:00 Paris time (UTC+1 in January), 10 h long
    start = datetime(2026, 1, 14, 22, 0, tzinfo=PARIS)
    rec = _flat(36000, start=start)
    (w,) = resolve_windows(ClockTime("04:00", "07:00", tz="Europe/Paris"), rec)
    assert (w.start_s, w.end_s) == (6 * 3600.0, 9 * 3600.0)
    assert w.label == "2026-01-15 04:00-07:00"
    # the same wall window in UTC is one hour later on the recording clock
    (u,) = resolve_windows(ClockTime("04:00", "07:00", tz="UTC"), rec)
    assert u.start_s == 7 * 3600.0
    # a recording start given in UTC resolves identically
    rec_utc = _flat(36000, start=start.astimezone(timezone.utc))
    (w2,) = resolve_windows(ClockTime("04:00", "07:00", tz="Europe/Paris"), rec_utc)
    assert (w2.start_s, w2.end_s) == (w.start_s, w.end_s)


def test_clock_window_across_spring_forward():
    # Europe/Paris jumps 02:00 -> 03:00 on 2026-03-29: the night 22:00-06:00 lasts 7 h
    start = datetime(2026, 3, 28, 21, 0, tzinfo=PARIS)
    rec = _flat(12 * 3600, start=start)
    (w,) = resolve_windows(ClockTime("22:00", "06:00", tz="Europe/Paris"), rec)
    assert w.start_s == 3600.0
    assert w.duration_s == 7 * 3600.0
    # 04:00-07:00 local that morning is 02:00-05:00 UTC: 6 h after the 20:00 UTC start
    (m,) = resolve_windows(ClockTime("04:00", "07:00", tz="Europe/Paris"), rec)
    assert m.start_s == 6 * 3600.0
    assert m.duration_s == 3 * 3600.0


def test_clock_window_across_fall_back():
    # 2026-10-25 03:00 -> 02:00 in Paris: the night 22:00-06:00 lasts 9 h
    start = datetime(2026, 10, 24, 21, 0, tzinfo=PARIS)
    rec = _flat(12 * 3600, start=start)
    (w,) = resolve_windows(ClockTime("22:00", "06:00", tz="Europe/Paris"), rec)
    assert w.duration_s == 9 * 3600.0


@settings(max_examples=60, deadline=None)
@given(day=st.dates(min_value=datetime(2024, 1, 1).date(), max_value=datetime(2027, 12, 31).date()),
       hour=st.integers(0, 23), h0=st.integers(0, 23), h1=st.integers(0, 23))
def test_clock_windows_respect_the_zone(day, hour, h0, h1):
    if h0 == h1:
        return
    start = datetime(day.year, day.month, day.day, hour, 0, tzinfo=PARIS)
    rec = _flat(30 * 3600, rr_ms=1500.0, start=start)
    for w in resolve_windows(ClockTime(f"{h0:02d}:00", f"{h1:02d}:00", tz="Europe/Paris"), rec):
        assert 0.0 <= w.start_s <= w.end_s <= rec.beat_times_s[-1]
        t0 = (start.astimezone(timezone.utc) + timedelta(seconds=w.start_s)).astimezone(PARIS)
        t1 = (start.astimezone(timezone.utc) + timedelta(seconds=w.end_s)).astimezone(PARIS)
        if not w.clipped:  # unclipped bounds fall on the requested wall-clock hours
            assert (t0.hour, t0.minute) == (h0, 0) or _skipped(t0, h0)
            assert (t1.hour, t1.minute) == (h1, 0) or _skipped(t1, h1)


def _skipped(t: datetime, hour: int) -> bool:
    # a wall hour that does not exist (spring forward) lands one hour later (PEP 495 fold=0)
    return t.hour == (hour + 1) % 24


def test_clock_window_needs_start_and_valid_zone():
    with pytest.raises(rrkit.InputError, match="absolute start time"):
        resolve_windows(ClockTime("04:00", "07:00"), _flat(100))
    with pytest.raises(rrkit.InputError, match="unknown time zone 'Mars/Olympus'"):
        ClockTime("04:00", "07:00", tz="Mars/Olympus")
    with pytest.raises(rrkit.InputError, match="HH:MM"):
        ClockTime("25:00", "07:00")


def test_most_stable_segment_avoids_corrected_beats_then_drift():
    # 2 h night recording; 3 ectopic beats planted in the first hour, a heart-rate ramp in the
    # second half of the second hour: the stable 5 minutes lie in the flat, clean part
    start = datetime(2026, 1, 15, 3, 0, tzinfo=PARIS)
    from rrkit.simulate import simulate_rr

    rr = simulate_rr(7200, seed=1, as_recording=False)
    t = np.cumsum(rr) / 1000.0
    rr = rr + np.where(t > 5400, (t - 5400) * -0.2, 0)
    for k in (600, 1800, 3000):
        rr[k], rr[k + 1] = rr[k] * 0.6, rr[k + 1] * 1.4
    rec = rrkit.Recording.from_rr(rr, start=start)
    cr = rrkit.clean(rec)
    spec = ClockTime("03:00", "05:00", tz="Europe/Paris", stable_s=300)
    with pytest.raises(rrkit.InputError, match="needs the cleaning result"):
        resolve_windows(spec, rec)
    (w,) = resolve_windows(spec, rec, clean_result=cr)
    assert w.duration_s == 300
    assert w.extra["stable_corrected_beats"] == 0
    changed_t = cr.input.interval_times_s[cr.changed]
    assert not np.any((changed_t >= w.start_s) & (changed_t <= w.end_s))
    assert w.end_s <= 5400 + 1  # the ramp raises the drift of later candidates
    assert "stable 5m" in w.label


# --------------------------------------------------------------------------- events
def test_events_table(tmp_path):
    path = tmp_path / "protocol.csv"
    path.write_text("label,start_s,end_s,breaths_per_min\nsupine,0,300,\n"
                    "paced,300,600,6\ntilt,600,1200,\n")
    spec = Events.from_csv(path)
    ws = resolve_windows(spec, _flat(900))
    assert [w.label for w in ws] == ["supine", "paced", "tilt"]
    assert ws[1].breathing_hz == pytest.approx(0.1)
    assert ws[2].end_s == 900.0
    assert ws[2].clipped


@pytest.mark.parametrize(("text", "match"), [
    ("name,start_s,end_s\n", "header must name label"),
    ("label,start_s,end_s\nrest,0,abc\n", "line 2: start_s and end_s must be numbers"),
    ("label,start_s,end_s\nrest,300,100\n", "line 2: end_s must be after start_s"),
    ("label,start_s,end_s\nrest,0\n", "line 2: expected 3 columns"),
    ("label,start_s,end_s,breathing_hz\nrest,0,10,-1\n", "breathing_hz must be > 0"),
    ("", "events table is empty"),
])
def test_events_table_errors(tmp_path, text, match):
    path = tmp_path / "bad.csv"
    path.write_text(text)
    with pytest.raises(rrkit.InputError, match=match):
        Events.from_csv(path)


# --------------------------------------------------------------------------- text syntax
@pytest.mark.parametrize(("text", "expected"), [
    ("whole", Whole()),
    ("morning", MORNING),
    ("start:60+300", FromStart(60, 300)),
    ("start:1m+5m", FromStart(60, 300)),
    ("start:90", FromStart(90, None)),
    ("last:5m", BeforeEnd(300)),
    ("slide:5m", Sliding(300)),
    ("slide:300/60,partial", Sliding(300, 60, partial=True)),
    ("clock:04:00-07:00@Europe/Paris", ClockTime("04:00", "07:00", tz="Europe/Paris")),
    ("clock:22:00-06:00,stable=5m", ClockTime("22:00", "06:00", stable_s=300)),
])
def test_parse_window(text, expected):
    got = parse_window(text)
    assert type(got) is type(expected)
    assert got == expected


def test_parse_window_joined_and_events(tmp_path):
    path = tmp_path / "ev.csv"
    path.write_text("label,start_s,end_s\na,0,10\n")
    specs = parse_window(f"morning; events:{path}")
    assert specs[0] is MORNING
    assert isinstance(specs[1], Events)
    assert len(resolve_windows(specs, _flat(600))) == 2


@pytest.mark.parametrize(("text", "match"), [
    ("mornin", "did you mean 'morning'"),
    ("slide:5x", "slide length must be a number"),
    ("clock:4-7", "HH:MM-HH:MM"),
    ("clock:04:00-07:00,steady=5m", "only stable=LENGTH"),
    ("", "non-empty"),
])
def test_parse_window_errors(text, match):
    with pytest.raises(rrkit.InputError, match=match):
        parse_window(text)


def test_parse_duration_units():
    assert parse_duration("90") == 90
    assert parse_duration("2m") == 120
    assert parse_duration("1.5h") == 5400
    assert parse_duration("30 s") == 30


def test_window_validation():
    with pytest.raises(rrkit.InputError, match="end_s"):
        Window("x", 10, 5)
    with pytest.raises(rrkit.InputError, match=r"length_s must be in \(0"):
        Sliding(0)


def test_from_start_label_reads_as_seconds_not_as_a_step():
    # '/' is the step of slide:5m/1m, so start:60+300 is labelled by its span
    from rrkit import Recording
    from rrkit.windows import FromStart, parse_window

    rec = Recording.from_rr([1000.0] * 400)
    assert parse_window("start:60+300").resolve(rec)[0].label == "60-360 s"
    assert FromStart(30.0).resolve(rec)[0].label == "from 30 s"
