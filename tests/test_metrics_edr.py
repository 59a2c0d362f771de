"""A breathing rate measured from the ECG (R-wave amplitude modulation), and what the breathing
note makes of it. ECGs are simulated with neurokit2 (``ecg_simulate``) and their R waves
scaled by a known breathing rhythm, so the true rate is known."""

from __future__ import annotations

import math

import numpy as np
import pytest

import rrkit
from rrkit.metrics._edr import ecg_breathing_hz
from rrkit.simulate import simulate_rr

FS = 250.0


def _ecg(breathing_hz, *, seed=1, duration_s=150):
    nk = pytest.importorskip("neurokit2")
    ecg = nk.ecg_simulate(duration=duration_s, sampling_rate=FS, heart_rate=70, method="simple",
                          random_state=seed, noise=0.02)
    t = np.arange(ecg.size) / FS
    if breathing_hz is not None:
        ecg = ecg * (1 + 0.25 * np.sin(2 * np.pi * breathing_hz * t))
    return ecg


@pytest.mark.parametrize("truth", [0.1, 0.25])
def test_ecg_breathing_rate_is_the_amplitude_rhythm(truth):
    # Welch resolution 1/64 s = 0.016 Hz on the 4 Hz amplitude series: within one bin
    assert ecg_breathing_hz(_ecg(truth), fs_hz=FS) == pytest.approx(truth, abs=0.016)


def test_ecg_without_a_breathing_rhythm_gives_no_rate():
    assert ecg_breathing_hz(_ecg(None), fs_hz=FS) is None


def test_measured_rate_decides_the_note():
    # orthostatic RR (0.1 Hz baroreflex oscillation dominant) with breathing measured at 0.25 Hz
    # from the ECG: the 0.1 Hz peak is named as a heart-rate oscillation, not breathing
    rate = ecg_breathing_hz(_ecg(0.25), fs_hz=FS)
    standing = simulate_rr(duration_s=300, seed=4, mean_rr_ms=700.0, lf_hz=0.1, lf_amp_ms=60.0,
                           resp_hz=0.25, resp_amp_ms=8.0)
    m = rrkit.metrics(standing, breathing_hz=rate)
    assert not any(n.startswith("breathing at") for n in m.notes)
    assert any("not breathing" in n for n in m.notes)
    assert 0.2 < m["resp_hz"] < 0.32
    # paced 6 per minute, measured from the ECG: the claim
    paced_rate = ecg_breathing_hz(_ecg(0.1), fs_hz=FS)
    paced = simulate_rr(duration_s=300, seed=2, resp_hz=0.1, resp_amp_ms=60.0, lf_amp_ms=5.0)
    p = rrkit.metrics(paced, breathing_hz=paced_rate)
    assert any(n.startswith("breathing at 0.09") and "falls into LF" in n for n in p.notes)
    assert not math.isnan(p["resp_hz"])
