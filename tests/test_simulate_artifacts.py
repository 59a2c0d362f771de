"""`rrkit.simulate.inject_artifacts`: the planted artifacts are what the truth says they are.

Source of every check: the construction itself (a missed beat sums two intervals, an extra beat
splits one, a premature beat with its compensatory interval keeps the beat grid), checked
against the artifact-free input.
"""

from __future__ import annotations

import numpy as np
import pytest

from rrkit import InputError, Recording
from rrkit.simulate import ARTIFACT_CLASSES, inject_artifacts, simulate_rr


@pytest.fixture(scope="module")
def base():
    return simulate_rr(2000, seed=11)


def test_counts_and_labels(base):
    counts = {"ectopic": 10, "missed": 8, "extra": 6, "long": 5, "short": 4}
    rec, truth = inject_artifacts(base, counts=counts, seed=1)
    assert rec.n_intervals == base.n_intervals - 8 + 6
    assert truth.labels.shape == (rec.n_intervals,)
    lab = truth.labels
    assert (lab == "ectopic").sum() == 20  # two intervals per premature beat
    assert (lab == "extra").sum() == 12  # the two parts of each split interval
    assert (lab == "missed").sum() == 8
    assert (lab == "long").sum() == 5
    assert (lab == "short").sum() == 4
    for cls, k in counts.items():
        assert truth.events[cls].size == k
        assert (lab[truth.events[cls]] == cls).all()
    assert truth.clean is base
    np.testing.assert_array_equal(truth.clean_rr_ms, base.rr_ms)
    assert truth.premature_beats.size == 10


def test_each_artifact_is_built_as_described(base):
    rec, truth = inject_artifacts(base, counts=dict.fromkeys(ARTIFACT_CLASSES, 6), seed=2)
    rr, clean_rr, idx = rec.rr_ms, base.rr_ms, truth.clean_index
    for e in truth.events["missed"]:  # two clean intervals summed
        i = idx[e]
        assert rr[e] == pytest.approx(clean_rr[i] + clean_rr[i + 1])
    for e in truth.events["extra"]:  # one clean interval split at 20-80%
        i = idx[e]
        assert idx[e + 1] == i
        assert rr[e] + rr[e + 1] == pytest.approx(clean_rr[i])
        assert 0.2 <= rr[e] / clean_rr[i] <= 0.8
    for e in truth.events["ectopic"]:  # 20-40% early, compensated: grid kept
        i = idx[e]
        assert rr[e] + rr[e + 1] == pytest.approx(clean_rr[i] + clean_rr[i + 1])
        assert 0.6 <= rr[e] / clean_rr[i] <= 0.8
        assert rr[e + 1] > clean_rr[i + 1]
    for e in truth.events["long"]:
        assert 1.3 <= rr[e] / clean_rr[idx[e]] <= 1.6
    for e in truth.events["short"]:
        assert 0.55 <= rr[e] / clean_rr[idx[e]] <= 0.75
    # untouched intervals are the clean ones
    normal = truth.labels == "normal"
    np.testing.assert_array_equal(rr[normal], clean_rr[idx[normal]])


def test_spacing_rates_and_seed(base):
    rec, truth = inject_artifacts(base, rates={"missed": 0.05, "ectopic": 0.05}, seed=3,
                                  min_spacing=3)
    assert truth.events["missed"].size == round(0.05 * base.n_intervals)
    starts = np.sort(np.concatenate(list(truth.events.values())))
    # events are at least 3 untouched intervals apart (an event spans at most 2 intervals)
    assert np.diff(starts).min() >= 2 + 3 - 1
    again, _truth2 = inject_artifacts(base, rates={"missed": 0.05, "ectopic": 0.05}, seed=3,
                                     min_spacing=3)
    np.testing.assert_array_equal(rec.rr_ms, again.rr_ms)
    other, _ = inject_artifacts(base, rates={"missed": 0.05, "ectopic": 0.05}, seed=4)
    assert not np.array_equal(other.rr_ms, rec.rr_ms)
    assert rec.beat_times_s[0] == base.beat_times_s[0]


def test_errors(base):
    with pytest.raises(InputError, match="did you mean 'missed'"):
        inject_artifacts(base, counts={"mised": 3})
    with pytest.raises(InputError, match="exactly one of rates and counts"):
        inject_artifacts(base)
    with pytest.raises(InputError, match="do not fit"):
        inject_artifacts(simulate_rr(50, seed=1), counts={"missed": 40})
    gappy = Recording.from_rr([800.0] * 10, gaps=[False] * 9 + [True])
    with pytest.raises(InputError, match="without gaps"):
        inject_artifacts(gappy, counts={"missed": 1})
    with pytest.raises(InputError, match=r"rates\['missed'\] must be in"):
        inject_artifacts(base, rates={"missed": 1.5})
