"""The invented demo squad: deterministic, regenerable, and its story is in the numbers."""

from __future__ import annotations

import contextlib
import gzip
import hashlib
import itertools
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from rrkit.simulate import _squad_story as story
from rrkit.simulate import squad

REPO = Path(__file__).resolve().parents[1]
SAMPLES = REPO / "data_samples"


def _digest(path: Path) -> str:
    data = path.read_bytes()
    if path.suffix == ".gz":  # compare the content; gzip headers are fixed (mtime 0, no name)
        with contextlib.suppress(EOFError):  # the deliberately cut-off upload: its raw bytes
            data = gzip.decompress(data)
    return hashlib.sha256(data).hexdigest()


def test_full_regeneration_is_identical_to_committed(tmp_path):
    """One command regenerates data_samples/ byte for byte (same seed, same code)."""
    if not (SAMPLES / "squad.json").is_file():
        pytest.skip(f"committed demo data not found: {SAMPLES}")
    out = squad.generate_squad(tmp_path / "squad")
    written = out.all_files()
    committed = sorted(str(p.relative_to(SAMPLES)) for p in SAMPLES.rglob("*")
                       if p.is_file() and p.name != "README.md")
    assert written == committed
    for rel in written:
        assert _digest(tmp_path / "squad" / rel) == _digest(SAMPLES / rel), rel
    gz = [r for r in written if r.endswith(".gz")]
    assert gz, "the squad has gzip files"
    for rel in gz:  # and the compressed bytes themselves
        assert (tmp_path / "squad" / rel).read_bytes() == (SAMPLES / rel).read_bytes(), rel


def test_reduced_copy_is_a_subset_of_the_full_squad(tmp_path):
    """Seeds are per (athlete, day, purpose): a smaller squad holds exactly the same mornings."""
    small = squad.generate_squad(tmp_path / "small", settings=squad.SquadSettings(
        n_athletes=2, n_weeks=2, nights=False))
    big = squad.generate_squad(tmp_path / "big", settings=squad.SquadSettings(
        n_athletes=3, n_weeks=3, nights=False))
    assert set(small.mornings) < set(big.mornings)
    for rel in small.mornings:
        assert _digest(tmp_path / "small" / rel) == _digest(tmp_path / "big" / rel), rel
    load_s = pd.read_csv(tmp_path / "small" / "training_load.csv")
    load_b = pd.read_csv(tmp_path / "big" / "training_load.csv")
    merged = load_s.merge(load_b, on=["date", "subject"], suffixes=("", "_big"))
    assert len(merged) == len(load_s) == 2 * 14
    assert (merged["load_au"] == merged["load_au_big"]).all()
    # the daily log (sleep, body mass, wellness) too: same values for the days both cover
    log_s = pd.read_csv(tmp_path / "small" / "daily_log.csv", keep_default_na=False, dtype=str)
    log_b = pd.read_csv(tmp_path / "big" / "daily_log.csv", keep_default_na=False, dtype=str)
    both = log_s.merge(log_b, on=["date", "subject"], suffixes=("", "_big"))
    assert len(both) == len(log_s) == 2 * 14
    for col in ("sleep_h", "body_mass_kg", "wellness_pts"):
        assert (both[col] == both[f"{col}_big"]).all(), col


def test_daily_log_plants_its_relations():
    """Within each athlete, the true morning ln-RMSSD deviation regresses on the night's sleep
    with the planted slope (exact over all 84 nights; the few unlogged nights move it a little,
    hence the tolerance); the athletes with the higher baseline
    ln-RMSSD sleep less (the between pattern runs the other way)."""
    from rrkit.simulate import _squad_log

    s = squad.SquadSettings(nights=False)
    rows = _squad_log.log_rows(
        seed=s.seed, athletes=story.ATHLETES, n_days=84, first_monday=s.first_monday,
        ln_noise=[squad._day_noise(s, a) for a in range(8)],
        loads_au=[np.array([float(r[-1]) for r in squad._load_rows(s, a)]) for a in range(8)])
    log = pd.DataFrame(rows, columns=list(_squad_log.LOG_COLUMNS))
    usual = []
    for a, ath in enumerate(story.ATHLETES):
        mine = log[log["subject"] == ath.subject].reset_index(drop=True)
        ok = mine["sleep_h"] != ""
        sleep = mine.loc[ok, "sleep_h"].astype(float).to_numpy()
        true = (squad._day_noise(s, a) + np.array([story.day_state(ath, d)[0]
                                                   for d in range(84)]))[ok.to_numpy()]
        slope = np.polyfit(sleep - sleep.mean(), true, 1)[0]
        assert abs(slope - _squad_log.SLEEP_WITHIN_LN_PER_H) < 0.025, ath.subject
        usual.append(sleep.mean())
    between = np.polyfit([a.ln_rmssd for a in story.ATHLETES], usual, 1)[0]
    assert between < -1.0  # planted -1.5 h per ln unit, with invented offsets
    well = log["wellness_pts"].replace("", np.nan).astype(float)
    assert well.dropna().between(5, 25).all()
    assert log["body_mass_kg"].replace("", np.nan).astype(float).min() > 60


def test_story_in_the_truth():
    """The simulated (pre-artifact) ln-RMSSD drops at altitude for most athletes, not all."""
    s = squad.SquadSettings()
    drops = []
    for a, ath in enumerate(story.ATHLETES):
        base = np.mean([story.day_state(ath, d)[0] for d in range(28)])
        alt = np.mean([story.day_state(ath, d)[0] for d in range(37, 49)])
        drops.append(base - alt)
        assert squad._day_noise(s, a).shape == (84,)
    drops = np.array(drops)
    assert (drops > 0.2).sum() >= 6
    assert (drops < 0.1).sum() == 2
    # the phases tile the 12 weeks without gaps
    edges = [(lo, hi) for _n, lo, hi in story.PHASES]
    assert edges[0][0] == 0
    assert edges[-1][1] == 83
    assert all(b[0] == a[1] + 1 for a, b in itertools.pairwise(edges))


def test_files_in_their_formats(tmp_path):
    out = squad.generate_squad(tmp_path, settings=squad.SquadSettings(n_weeks=1, nights=False))
    by_subject = {}
    for rel in out.mornings:
        by_subject.setdefault(rel.split("/")[1], []).append(rel)
    assert sorted(by_subject) == [a.subject for a in story.ATHLETES]
    first = {s: (tmp_path / sorted(v)[0]) for s, v in by_subject.items()}
    assert first["R03"].read_text().splitlines()[0].startswith(("0.", "1."))   # seconds
    assert first["R05"].read_text().splitlines()[0] == "time_s;rr_s"          # decimal commas
    assert "," in first["R05"].read_text().splitlines()[1].split(";")[1]
    assert first["R04"].read_text().splitlines()[0] == "timestamp,rr_ms"
    assert first["R06"].name.endswith(".txt.gz")
    assert int(gzip.decompress(first["R06"].read_bytes()).split(b"\n")[0]) > 300
    manifest = pd.read_csv(tmp_path / "mornings" / "manifest.csv")
    assert list(manifest.columns) == ["path", "subject", "start", "format"]
    assert len(manifest) == len(out.mornings)
    doc = json.loads((tmp_path / "squad.json").read_text())
    assert "invented" in doc["description"]
    assert "not real people" in doc["description"]


def test_unusable_files_are_broken_as_described(tmp_path):
    out = squad.generate_squad(tmp_path, settings=squad.SquadSettings(nights=False))
    assert len(out.unusable) == len(story.UNUSABLE)
    kinds = {}
    for rel in out.unusable:
        subj = rel.split("/")[1]
        kinds[next(u.kind for u in story.UNUSABLE if u.subject == subj)] = tmp_path / rel
    assert kinds["empty"].stat().st_size == 0
    assert b"<html>" in kinds["garbage"].read_bytes()
    bad_lines = [ln for ln in kinds["bad_value"].read_text().splitlines()
                 if not ln.strip().isdigit()]
    assert len(bad_lines) == 1  # one corrupted value, the rest intact
    with pytest.raises(EOFError):
        gzip.decompress(kinds["truncated_gz"].read_bytes())
    short = [float(x) for x in kinds["short"].read_text().split()]
    assert sum(short) < 45  # seconds format: the strap came off after about 40 s


def test_settings_are_checked():
    from rrkit import InputError

    with pytest.raises(InputError, match=r"n_athletes must be in \[1, 8\]"):
        squad.SquadSettings(n_athletes=9)
