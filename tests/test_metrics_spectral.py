"""Spectra: analytic sinusoids, Parseval, Lomb-Scargle angular frequency, detrending, breathing."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.signal import lombscargle

import rrkit
from rrkit.metrics import MetricsSettings, Spectrum
from rrkit.metrics.spectral import resample, smoothness_priors_detrend
from rrkit.simulate import simulate_rr

A_LF, A_HF = 30.0, 40.0   # ms
F_LF, F_HF = 0.10, 0.25   # Hz, away from every band edge


def _sinusoid_rr(duration_s=300.0, mean_ms=1000.0, noise_ms=0.0, seed=0):
    """RR_k = mean + A_LF sin(2 pi F_LF t_k) + A_HF sin(2 pi F_HF t_k), t_k the beat times."""
    rng = np.random.default_rng(seed)
    rr, t = [], 0.0
    while t < duration_s:
        v = (mean_ms + A_LF * math.sin(2 * math.pi * F_LF * t)
             + A_HF * math.sin(2 * math.pi * F_HF * t) + noise_ms * rng.standard_normal())
        rr.append(v)
        t += v / 1000.0
    return rrkit.Recording.from_rr(rr)


@pytest.mark.parametrize("psd", ["welch", "lomb", "ar"])
def test_sinusoids_put_a2_over_2_into_their_bands(psd):
    # analytic: a sinusoid of amplitude A carries A^2/2 of variance (REFERENCES.md section 3:
    # 450 ms^2 in LF, 800 ms^2 in HF; 5 % tolerance on a 5-minute window)
    rec = _sinusoid_rr()
    m = rrkit.metrics(rec, psd=psd, domains=["frequency"])
    assert m["lf_ms2"] == pytest.approx(A_LF ** 2 / 2, rel=0.05)
    assert m["hf_ms2"] == pytest.approx(A_HF ** 2 / 2, rel=0.05)
    # Parseval: the total power is the variance of the series (within 5 %)
    assert m["total_power_ms2"] == pytest.approx(np.var(rec.rr_ms), rel=0.05)
    # peaks within one frequency bin: the grid step for Welch and Lomb; for AR, whose grid is
    # a fine evaluation of a smooth model, the resolution 1/T of the 5-minute record
    sp = rrkit.spectrum(rec, psd=psd)
    assert isinstance(sp, Spectrum)
    tol = 1.0 / rec.duration_s if psd == "ar" else sp.df_hz
    assert abs(m["lf_peak_hz"] - F_LF) <= tol + 1e-12
    assert abs(m["hf_peak_hz"] - F_HF) <= tol + 1e-12
    assert m["lf_nu"] + m["hf_nu"] == pytest.approx(100.0)
    assert m["lf_hf"] == pytest.approx(m["lf_ms2"] / m["hf_ms2"])
    assert sp.band_powers_ms2["lf"] == pytest.approx(m["lf_ms2"])


@pytest.mark.parametrize("psd", ["welch", "lomb", "ar"])
def test_sinusoids_with_noise_and_faster_heart(psd):
    # the same check at 75 bpm with 3 ms white noise (9 ms^2 spread over 0-0.67 Hz)
    rec = _sinusoid_rr(mean_ms=800.0, noise_ms=3.0, seed=1)
    m = rrkit.metrics(rec, psd=psd, domains=["frequency"])
    assert m["lf_ms2"] == pytest.approx(A_LF ** 2 / 2, rel=0.05)
    assert m["hf_ms2"] == pytest.approx(A_HF ** 2 / 2, rel=0.05)


def test_welch_density_integrates_to_variance():
    # Parseval for the Welch estimator itself: on white noise resampled at 4 Hz the one-sided
    # density integrates (0 to 2 Hz) to the variance of the series fed to it
    rng = np.random.default_rng(3)
    rr = 1000 + 20 * rng.standard_normal(600)
    rec = rrkit.Recording.from_rr(rr)
    s = MetricsSettings(detrend="linear")
    sp = rrkit.spectrum(rec, settings=s)
    t = rec.interval_times_s
    x = resample(t, rr, 4.0)
    x = x - np.polyval(np.polyfit(np.arange(x.size), x, 1), np.arange(x.size))
    assert sp.psd_ms2_hz.sum() * sp.df_hz == pytest.approx(np.var(x), rel=0.05)


def test_lombscargle_takes_angular_frequency():
    # scipy.signal.lombscargle is defined on angular frequency (rad/s): a 0.1 Hz sinusoid peaks
    # at 2 pi 0.1 rad/s; rrkit passes 2 pi f and reports Hz (scipy docs; REFERENCES.md 3)
    rng = np.random.default_rng(0)
    t = np.sort(rng.uniform(0, 300, 400))
    x = 10 * np.sin(2 * np.pi * 0.1 * t)
    f = np.linspace(0.01, 0.5, 2000)
    p = lombscargle(t, x, 2 * np.pi * f, normalize=False)
    assert f[p.argmax()] == pytest.approx(0.1, abs=0.002)
    rec = rrkit.Recording.from_peak_times(np.cumsum(np.full(300, 1.0)))
    rr = 1000 + 10 * np.sin(2 * np.pi * 0.1 * rec.interval_times_s)
    sp = rrkit.spectrum(rrkit.Recording.from_rr(rr), psd="lomb")
    assert sp.freqs_hz[sp.psd_ms2_hz.argmax()] == pytest.approx(0.1, abs=sp.df_hz)
    # one-sided PSD = 2 T P / N integrates to the variance (REFERENCES.md section 3)
    assert sp.psd_ms2_hz.sum() * sp.df_hz == pytest.approx(np.var(rr), rel=0.03)


def test_smoothness_priors_matches_dense_formula(rng):
    # Tarvainen et al. 2002: z_stat = (I - (I + lambda^2 D2' D2)^-1) z, dense solve as reference
    z = np.cumsum(rng.standard_normal(200)) + 5 * np.sin(np.arange(200) / 3)
    lam = 500.0
    n = z.size
    d2 = np.zeros((n - 2, n))
    for i in range(n - 2):
        d2[i, i:i + 3] = [1, -2, 1]
    dense = z - np.linalg.solve(np.eye(n) + lam ** 2 * d2.T @ d2, z)
    assert np.allclose(smoothness_priors_detrend(z, lam), dense, atol=1e-8)


def test_smoothness_priors_cutoff_below_lf():
    # REFERENCES.md 3: lambda = 500 at 4 Hz is a high-pass with cut-off near 0.0356 Hz (computed):
    # 0.1 Hz passes almost untouched, 0.01 Hz is mostly removed
    t = np.arange(4 * 600) / 4.0
    keep = np.sin(2 * np.pi * 0.1 * t)
    drop = np.sin(2 * np.pi * 0.01 * t)
    mid = slice(400, -400)
    kept = smoothness_priors_detrend(keep, 500.0)[mid]
    assert np.std(kept) == pytest.approx(np.std(keep[mid]), rel=0.02)
    assert np.std(smoothness_priors_detrend(drop, 500.0)[mid]) < 0.2 * np.std(drop[mid])


def test_spline_equals_scipy_cubicspline(rng):
    # rrkit's overhead-free spline against scipy.interpolate.CubicSpline (not-a-knot)
    from scipy.interpolate import CubicSpline

    from rrkit._spline import spline_on_grid

    for n in (3, 4, 5, 17, 300):
        x = np.cumsum(rng.uniform(0.4, 1.6, n))
        y = 1000 + 50 * rng.standard_normal(n)
        grid = np.linspace(x[0], x[-1], 4 * n)
        assert np.allclose(spline_on_grid(x, y, grid), CubicSpline(x, y)(grid), rtol=0, atol=1e-9)


def test_spline_resampling_on_4hz_grid():
    rec = simulate_rr(200, seed=1)
    x = resample(rec.interval_times_s, rec.rr_ms, 4.0)
    span = rec.interval_times_s[-1] - rec.interval_times_s[0]
    assert x.size == int(span * 4) + 1
    assert x[0] == pytest.approx(rec.rr_ms[0])
    assert x[-1] <= rec.rr_ms.max() + 50


def test_bands_are_configurable():
    rec = _sinusoid_rr()
    m = rrkit.metrics(rec, domains=["frequency"], bands={"lf": (0.04, 0.2), "hf": (0.2, 0.5)})
    assert m["lf_ms2"] == pytest.approx(A_LF ** 2 / 2, rel=0.05)
    m2 = rrkit.metrics(rec, domains=["frequency"], bands={"lf": (0.04, 0.3), "hf": (0.3, 0.5)})
    assert m2["lf_ms2"] == pytest.approx((A_LF ** 2 + A_HF ** 2) / 2, rel=0.05)


def test_gap_spectrum_never_bridges_the_gap():
    # two 4-minute runs of the same oscillation separated by a break: same band powers as one run
    one = _sinusoid_rr(duration_s=240)
    rr = np.concatenate((one.rr_ms, [20000.0], one.rr_ms))
    gaps = np.zeros(rr.size, bool)
    gaps[one.rr_ms.size] = True
    both = rrkit.metrics(rrkit.Recording.from_rr(rr, gaps=gaps), domains=["frequency"])
    single = rrkit.metrics(one, domains=["frequency"])
    assert both["hf_ms2"] == pytest.approx(single["hf_ms2"], rel=1e-6)
    assert both["lf_ms2"] == pytest.approx(single["lf_ms2"], rel=1e-6)


def test_slow_peak_alone_is_not_called_breathing():
    # Simulated orthostatic series (known truth): standing, heart rate about 86 bpm, a strong
    # 0.1 Hz baroreflex oscillation (60 ms) and spontaneous breathing at 0.25 Hz with a small
    # RSA (8 ms). The dominant peak is at 0.1 Hz and is not breathing: no breathing claim, no
    # breathing rate taken from it.
    standing = simulate_rr(duration_s=300, seed=4, mean_rr_ms=700.0, lf_hz=0.1, lf_amp_ms=60.0,
                           resp_hz=0.25, resp_amp_ms=8.0)
    m = rrkit.metrics(standing)
    note = [n for n in m.notes if "dominant narrow peak" in n]
    assert len(note) == 1
    assert "slow breathing, or a strong ~0.1 Hz oscillation" in note[0]
    assert "cannot tell which" in note[0]
    assert not any(n.startswith("breathing") for n in m.notes)
    assert not any("respiratory power falls into LF" in n for n in m.notes)
    assert math.isnan(m["resp_hz"])  # not 0.1 Hz, and not 6 per minute


def test_paced_breathing_with_a_known_rate_gets_the_claim():
    # paced breathing at 6 breaths/min (simulated, known truth): the respiratory oscillation
    # moves to 0.1 Hz, into LF. With the rate given (protocol, events table) the note claims
    # breathing and resp_hz is the peak near it.
    rec = simulate_rr(duration_s=300, seed=2, resp_hz=0.1, resp_amp_ms=60.0, lf_amp_ms=5.0)
    m = rrkit.metrics(rec, breathing_hz=0.1)
    assert m["resp_hz"] == pytest.approx(0.1, abs=0.012)
    claim = [n for n in m.notes if n.startswith("breathing at 0.100 Hz (6.0/min, given)")]
    assert len(claim) == 1
    assert "respiratory power falls into LF" in claim[0]
    assert not any("dominant narrow peak" in n for n in m.notes)
    # the same series without the rate: described, not claimed
    unknown = rrkit.metrics(rec)
    assert any("dominant narrow peak" in n for n in unknown.notes)
    assert math.isnan(unknown["resp_hz"])
    # a given rate outside 3-42 per minute is not used, and never reported
    odd = rrkit.metrics(rec, breathing_hz=0.04)  # 2.4 per minute
    assert any("outside the plausible 3.0/min to 42.0/min" in n for n in odd.notes)
    assert not any(n.startswith("breathing at") for n in odd.notes)
    assert math.isnan(odd["resp_hz"])
    # spontaneous breathing at 0.25 Hz: no note, resp_hz is the HF peak
    rest = simulate_rr(duration_s=300, seed=2)
    normal = rrkit.metrics(rest)
    assert not any("breathing" in n or "dominant" in n for n in normal.notes)
    assert normal["resp_hz"] == normal["hf_peak_hz"]
    assert 0.2 < normal["resp_hz"] < 0.32



def test_spectrum_needs_a_minute():
    with pytest.raises(rrkit.InputError, match="lasts 60 s"):
        rrkit.spectrum(simulate_rr(30, seed=1))


def test_psd_units_scale_with_ms_squared():
    # ms in gives ms^2 out: doubling the modulation quadruples the power (REFERENCES.md 8)
    a = rrkit.metrics(simulate_rr(300, seed=4), domains=["frequency"])
    rec = simulate_rr(300, seed=4)
    rr2 = 1000 + 2 * (rec.rr_ms - 1000)
    b = rrkit.metrics(rrkit.Recording.from_rr(rr2), domains=["frequency"])
    # the beat times change slightly with the doubled modulation, so allow a few percent
    assert b["hf_ms2"] == pytest.approx(4 * a["hf_ms2"], rel=0.1)
