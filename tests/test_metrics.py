"""Time-domain and nonlinear metrics, notes, settings and gaps."""

from __future__ import annotations

import math

import numpy as np
import pytest

import rrkit
from rrkit.metrics import (
    ALL_KEYS,
    FREQUENCY_KEYS,
    NONLINEAR_KEYS,
    TIME_KEYS,
    MetricsResult,
    MetricsSettings,
)
from rrkit.metrics.nonlinear import dfa_fluctuations, sample_entropy
from rrkit.metrics.time import tinn
from rrkit.simulate import simulate_rr

HAND_RR = [800, 810, 790, 850, 820, 780, 900, 840]


def _submillisecond(n: int, seed: int) -> np.ndarray:
    """A realistic series with 0.1 us resolution, so no |dRR| sits exactly on 20 or 50 ms."""
    rr = simulate_rr(n, seed=seed, as_recording=False)
    return np.round(rr, 4) + 0.00003


# --------------------------------------------------------------------------- hand example
def test_hand_example_time_and_poincare():
    # REFERENCES.md section 1, hand-checkable example (computed there; also derivable by hand)
    m = rrkit.metrics(rrkit.Recording.from_rr(HAND_RR))
    assert m["mean_rr_ms"] == pytest.approx(823.75, abs=1e-9)
    assert m["sdnn_ms"] == pytest.approx(38.8909, abs=5e-5)
    assert m["rmssd_ms"] == pytest.approx(59.2814, abs=5e-5)
    assert m["sdsd_ms"] == pytest.approx(63.7331, abs=5e-5)
    # NN50 = 3 of N = 8 NN intervals (Task Force 1996 denominator), not /7 = 42.857 %
    assert m["pnn50_pct"] == pytest.approx(37.5, abs=1e-12)
    assert m["sd1_ms"] == pytest.approx(45.0661, abs=5e-5)
    assert m["sd2_ms"] == pytest.approx(36.6125, abs=5e-5)  # rotated definition, not 31.5285
    assert m["ln_rmssd"] == pytest.approx(math.log(59.28141120356), abs=1e-9)
    assert m["n_beats"] == 9
    assert m["mean_hr_bpm"] == pytest.approx(60000 / 823.75)
    assert m["max_hr_bpm"] == pytest.approx(60000 / 780)
    assert m["min_hr_bpm"] == pytest.approx(60000 / 900)


def test_keys_exact_and_ordered():
    m = rrkit.metrics(simulate_rr(400, seed=1))
    assert tuple(m) == ALL_KEYS
    assert isinstance(m, MetricsResult)
    assert isinstance(m, dict)
    assert all(isinstance(v, float) for v in m.values())
    only = rrkit.metrics(simulate_rr(400, seed=1), domains=["nonlinear", "time"])
    assert tuple(only) == TIME_KEYS + NONLINEAR_KEYS
    assert only.settings.domains == ("time", "nonlinear")


# --------------------------------------------------------------------------- neurokit2
@pytest.fixture(scope="module")
def nk():
    return pytest.importorskip("neurokit2")


def test_time_domain_equals_neurokit2(nk):
    rr = _submillisecond(400, seed=3)
    t = np.cumsum(rr) / 1000.0
    m = rrkit.metrics(rrkit.Recording.from_rr(rr), domains=["time", "nonlinear"])
    # neurokit2 0.3.0 hrv_time: intervals in ms, SDNN/SDSD ddof=1, pNN50 / N (REFERENCES.md 8)
    ref = nk.hrv_time({"RRI": rr, "RRI_Time": t})
    pairs = {"MeanNN": "mean_rr_ms", "SDNN": "sdnn_ms", "RMSSD": "rmssd_ms", "SDSD": "sdsd_ms",
             "pNN50": "pnn50_pct", "pNN20": "pnn20_pct", "MedianNN": "median_rr_ms",
             "HTI": "hrv_triangular_index"}
    for theirs, ours in pairs.items():
        assert m[ours] == pytest.approx(float(ref[f"HRV_{theirs}"].iloc[0]), rel=1e-9), ours
    # neurokit2 reports CVNN as a ratio, rrkit as a percentage
    assert m["cv_rr_pct"] == pytest.approx(100 * float(ref["HRV_CVNN"].iloc[0]), rel=1e-9)
    # neurokit2 hrv_nonlinear: SD1/SD2 rotated, ddof=1
    ref_nl = nk.hrv_nonlinear({"RRI": rr, "RRI_Time": t})
    for theirs, ours in {"SD1": "sd1_ms", "SD2": "sd2_ms", "SD1SD2": "sd1_sd2"}.items():
        assert m[ours] == pytest.approx(float(ref_nl[f"HRV_{theirs}"].iloc[0]), rel=1e-9), ours


def test_sampen_equals_neurokit2(nk):
    rr = _submillisecond(500, seed=5)
    m = rrkit.metrics(rrkit.Recording.from_rr(rr), domains=["nonlinear"])
    # neurokit2 entropy_sample takes r absolute: pass 0.2 SD (ddof=1) as rrkit uses
    ref, _ = nk.entropy_sample(rr, dimension=2, delay=1, tolerance=0.2 * np.std(rr, ddof=1))
    assert m["sampen"] == pytest.approx(ref, rel=1e-9)


def test_dfa_alpha1_close_to_neurokit2(nk):
    rr = _submillisecond(600, seed=7)
    m = rrkit.metrics(rrkit.Recording.from_rr(rr), domains=["nonlinear"])
    # neurokit2 fractal_dfa with the same box sizes (4..16) and non-overlapping boxes
    a1, _ = nk.fractal_dfa(rr, scale=np.arange(4, 17), overlap=False)
    a2, _ = nk.fractal_dfa(rr, scale=np.arange(16, 65), overlap=False)
    assert abs(m["dfa_alpha1"] - a1) < 0.02
    assert abs(m["dfa_alpha2"] - a2) < 0.02


# --------------------------------------------------------------------------- slow vs fast
def test_sampen_dense_equals_tree_and_loop(rng):
    # a slow obvious double loop (Richman & Moorman 2000 definition) against both fast counts
    x = 1000 + 40 * rng.standard_normal(120)
    r = 0.2 * x.std(ddof=1)
    m = 2
    nt = x.size - m
    a = b = 0
    for i in range(nt):
        for j in range(i + 1, nt):
            d = np.abs(x[i:i + m + 1] - x[j:j + m + 1])
            if d[:m].max() <= r:
                b += 1
                if d[m] <= r:
                    a += 1
    dense = sample_entropy([x], m=m, r=r, method="dense")
    tree = sample_entropy([x], m=m, r=r, method="tree")
    fast = sample_entropy([x], m=m, r=r, method="sorted")
    assert dense[1:] == (a, b) == tree[1:] == fast[1:]
    assert dense[0] == pytest.approx(-math.log(a / b), rel=1e-12)
    # templates never span a gap: two runs give the same counts as the loop over each run
    # pooled with cross-run template pairs
    parts = [x[:50], x[50:]]
    d2 = sample_entropy(parts, m=m, r=r, method="dense")
    t2 = sample_entropy(parts, m=m, r=r, method="tree")
    s2 = sample_entropy(parts, m=m, r=r, method="sorted")
    assert d2 == t2 == s2
    for mm in (1, 3):  # other template lengths agree too
        assert (sample_entropy([x], m=mm, r=r, method="sorted")
                == sample_entropy([x], m=mm, r=r, method="dense"))


def test_sampen_white_noise_limit(rng):
    # Richman & Moorman 2000 / REFERENCES.md section 4: Gaussian white noise, m=2, r=0.2 SD ->
    # -ln erf(0.1) = 2.1851 (derived); N = 2000 gives about 2.17-2.20
    x = rng.standard_normal(2000)
    value, _, _ = sample_entropy([x], m=2, r=0.2 * x.std(ddof=1))
    assert value == pytest.approx(-math.log(math.erf(0.1)), abs=0.06)


def test_dfa_fluctuation_matches_polyfit_loop(rng):
    # slow obvious implementation: np.polyfit line per box
    x = rng.standard_normal(300)
    y = np.cumsum(x - x.mean())
    scales = np.array([4, 7, 16, 33])
    fast, nb = dfa_fluctuations([x], scales)
    for k, n in enumerate(scales):
        res = []
        for j in range(y.size // n):
            seg = y[j * n:(j + 1) * n]
            tt = np.arange(n)
            res.append(np.mean((seg - np.polyval(np.polyfit(tt, seg, 1), tt)) ** 2))
        assert nb[k] == y.size // n
        assert fast[k] == pytest.approx(math.sqrt(np.mean(res)), rel=1e-9)


def _pink(n, rng):
    spec = np.fft.rfft(rng.standard_normal(n))
    f = np.fft.rfftfreq(n)
    f[0] = f[1]
    return np.fft.irfft(spec / np.sqrt(f), n)


@pytest.mark.parametrize(("kind", "expected", "tol"), [
    ("white", 0.5, 0.1), ("pink", 1.0, 0.15), ("brown", 1.5, 0.1)])
def test_dfa_synthetic_noise(kind, expected, tol):
    # Peng et al. 1995 (Chaos 5:82): white 0.5, 1/f 1.0, Brownian 1.5; 2000 beats, seeded
    rng = np.random.default_rng({"white": 11, "pink": 12, "brown": 13}[kind])
    if kind == "white":
        z = rng.standard_normal(2000)
    elif kind == "pink":
        z = _pink(2000, rng)
    else:
        z = np.cumsum(rng.standard_normal(2000))
    rr = 1000 + 20 * z / z.std()
    rr = rr - min(0.0, rr.min() - 300)
    m = rrkit.metrics(rrkit.Recording.from_rr(rr), domains=["nonlinear"])
    assert abs(m["dfa_alpha1"] - expected) < tol
    assert abs(m["dfa_alpha2"] - expected) < tol


# --------------------------------------------------------------------------- identities
@pytest.mark.parametrize("seed", [1, 2, 3])
def test_poincare_identities(seed):
    # Brennan, Palaniswami & Kamen 2001 (IEEE TBME 48:1342): SD1^2 = SDSD^2 / 2 exactly;
    # SD1^2 + SD2^2 = 2 SDNN^2 for long series (here within 1 % on >= 300 beats)
    m = rrkit.metrics(simulate_rr(400, seed=seed), domains=["time", "nonlinear"])
    assert m["sd1_ms"] ** 2 == pytest.approx(m["sdsd_ms"] ** 2 / 2, rel=1e-12)
    assert m["sd1_ms"] ** 2 + m["sd2_ms"] ** 2 == pytest.approx(2 * m["sdnn_ms"] ** 2, rel=0.01)


def test_tinn_triangle_recovers_its_base():
    # an exact triangular histogram (bins of 1/128 s) with feet at 600 and 1000 ms: TINN = 400 ms
    w = 1000 / 128
    lo, peak, hi = 600 / w, 800 / w, 1000 / w
    values = []
    for b in range(int(lo), int(hi)):
        c = b + 0.5
        h = (c - lo) / (peak - lo) if c <= peak else (hi - c) / (hi - peak)
        values += [c * w] * round(40 * h)
    assert tinn(np.array(values)) == pytest.approx(400.0, abs=2 * w)


# --------------------------------------------------------------------------- gaps
def test_gap_rmssd_pools_the_two_sides():
    rng = np.random.default_rng(4)
    left = 900 + 30 * rng.standard_normal(200)
    right = 700 + 30 * rng.standard_normal(200)
    bridge = 5000.0  # a break in the recording: not an NN interval
    rr = np.concatenate((left, [bridge], right))
    gaps = np.zeros(rr.size, bool)
    gaps[200] = True
    m = rrkit.metrics(rrkit.Recording.from_rr(rr, gaps=gaps))
    d = np.concatenate((np.diff(left), np.diff(right)))
    assert m["rmssd_ms"] == pytest.approx(math.sqrt(np.mean(d ** 2)), rel=1e-12)
    assert m["sdsd_ms"] == pytest.approx(d.std(ddof=1), rel=1e-12)
    nn = np.concatenate((left, right))
    assert m["sdnn_ms"] == pytest.approx(nn.std(ddof=1), rel=1e-12)
    assert m["pnn50_pct"] == pytest.approx(100 * np.mean(np.abs(d) > 50) * d.size / nn.size)
    # the 700 -> 900 ms step would otherwise add a 200 ms difference
    no_gap = rrkit.metrics(rrkit.Recording.from_rr(np.concatenate((left, right))))
    assert no_gap["rmssd_ms"] > m["rmssd_ms"]
    s1 = np.concatenate((np.diff(left), np.diff(right))) / math.sqrt(2)
    assert m["sd1_ms"] == pytest.approx(s1.std(ddof=1), rel=1e-12)


def test_clean_result_input_uses_corrected_recording():
    rec = simulate_rr(300, seed=2)
    cr = rrkit.clean(rec)
    a = rrkit.metrics(cr)
    b = rrkit.metrics(cr.recording)
    assert a == pytest.approx(b, nan_ok=True)
    assert a.clean_settings is cr.settings


# --------------------------------------------------------------------------- short data
def test_short_window_gives_nan_with_notes():
    m = rrkit.metrics(simulate_rr(40, seed=1))  # ~40 s
    for key in (*FREQUENCY_KEYS, "dfa_alpha1", "dfa_alpha2", "sampen"):
        assert math.isnan(m[key]), key
    text = " ".join(m.notes)
    assert "HF needs at least 60 s" in text
    assert "dfa_alpha1" in text
    assert "sampen" in text
    assert math.isfinite(m["rmssd_ms"])


def test_two_minute_window_has_hf_and_lf_but_no_vlf():
    m = rrkit.metrics(simulate_rr(duration_s=150, seed=1))
    assert math.isfinite(m["hf_ms2"])
    assert math.isfinite(m["lf_ms2"])
    assert math.isnan(m["vlf_ms2"])
    assert any(n.startswith("vlf_ms2") for n in m.notes)
    m = rrkit.metrics(simulate_rr(duration_s=90, seed=1))
    assert math.isfinite(m["hf_ms2"])
    assert math.isnan(m["lf_ms2"])
    assert any("LF needs at least 120 s" in n for n in m.notes)


def test_windows_of_the_task_force_lengths_get_their_bands():
    # Task Force 1996: about 1 min for HF and 2 min for LF. The beats of a window of exactly
    # that length span up to two intervals less (its first beat comes after its start, its
    # last before its end), so such a window still gets the band; one clearly shorter
    # (more than two intervals short) does not
    rec = simulate_rr(duration_s=900, seed=6)
    df = rrkit.analyze(rec, windows="start:30+120; start:300+60; start:500+110")
    two_min, one_min, short = (df.iloc[k] for k in range(3))
    assert two_min["end_s"] - two_min["start_s"] == pytest.approx(120.0)
    span = rec.slice(two_min["start_s"], two_min["end_s"])
    assert span.duration_s < 120.0  # the beats span less than the window
    assert math.isfinite(two_min["lf_ms2"])
    assert math.isfinite(two_min["hf_ms2"])
    assert "LF needs" not in two_min["notes"]
    assert math.isfinite(one_min["hf_ms2"])
    assert math.isnan(one_min["lf_ms2"])
    assert "LF needs at least 120 s" in one_min["notes"]
    assert math.isnan(short["lf_ms2"])
    # the same decision in a single metrics() call and in the batched many-window engine
    single = rrkit.metrics(rrkit.clean(span).recording)
    assert single["lf_ms2"] == pytest.approx(two_min["lf_ms2"], rel=1e-9)
    many = rrkit.analyze(rec, windows="slide:2m")  # 7 windows of 120 s, batched
    assert many["lf_ms2"].notna().all()


def test_empty_and_tiny_recordings_never_crash():
    empty = rrkit.Recording(np.zeros(0), np.zeros(0))
    m = rrkit.metrics(empty)
    assert all(math.isnan(m[k]) for k in ALL_KEYS if k not in ("n_beats", "duration_s"))
    assert m.notes
    one = rrkit.metrics(rrkit.Recording.from_rr([900.0]))
    assert one["mean_rr_ms"] == 900.0
    assert math.isnan(one["sdnn_ms"])


def test_every_nan_is_explained():
    for n in (5, 30, 70, 130):
        m = rrkit.metrics(simulate_rr(n, seed=n))
        text = " ".join(m.notes)
        for key, value in m.items():
            if math.isnan(value):
                assert key in text or "frequency domain" in text, (n, key)


# --------------------------------------------------------------------------- settings
def test_settings_travel_with_result():
    m = rrkit.metrics(simulate_rr(300, seed=1), psd="lomb", bands={"hf": (0.15, 0.5)})
    s = m.settings
    assert s.psd == "lomb"
    assert s.bands.hf == (0.15, 0.5)
    assert s.bands.lf == (0.04, 0.15)
    assert s.resample_hz == 4.0
    assert s.smoothness_lambda == 500.0
    assert s.ar_order == 16
    assert s.dfa_alpha1_beats == (4, 16)
    assert s.sampen_m == 2
    assert s.sampen_r == 0.2
    assert s.version == rrkit.__version__
    d = s.to_dict()
    assert d["bands.hf_hz"] == [0.15, 0.5]
    assert d["welch_overlap"] == 0.5
    hash(s)  # frozen settings hash (resume keys)


def test_bad_arguments_raise_input_error():
    rec = simulate_rr(100, seed=1)
    with pytest.raises(rrkit.InputError, match="psd must be one of"):
        rrkit.metrics(rec, psd="fft")
    with pytest.raises(rrkit.InputError, match="domains must be one of"):
        rrkit.metrics(rec, domains=["time", "chaos"])
    with pytest.raises(rrkit.InputError, match="must not overlap"):
        rrkit.metrics(rec, bands={"lf": (0.04, 0.2)})
    with pytest.raises(rrkit.InputError, match="data must be a Recording"):
        rrkit.metrics([800, 810])
    with pytest.raises(rrkit.InputError, match="sampen_r"):
        MetricsSettings(sampen_r=0)


def test_drop_strategy_pairs_only_adjacent_normal_beats():
    # clean(strategy="drop") keeps excluded intervals as gaps: RMSSD pools the differences of
    # the runs between them, never one across a dropped interval
    rec = simulate_rr(400, seed=6)
    rr = rec.rr_ms.copy()
    rr[120], rr[121] = rr[120] * 0.6, rr[121] * 1.4  # a premature beat and its pause
    cr = rrkit.clean(rrkit.Recording.from_rr(rr), strategy="drop")
    assert cr.recording.has_gaps
    d = np.concatenate([np.diff(s) for s in cr.recording.nn_segments() if s.size > 1])
    m = rrkit.metrics(cr, domains=["time"])
    assert m["rmssd_ms"] == pytest.approx(math.sqrt(np.mean(d ** 2)), rel=1e-12)
    nn = cr.recording.rr_ms[~cr.recording.gaps]
    assert m["sdnn_ms"] == pytest.approx(nn.std(ddof=1), rel=1e-12)
