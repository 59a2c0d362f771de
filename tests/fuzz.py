"""Fuzzing the readers: arbitrary bytes, near-valid text, WFDB and EDF headers.

The property (`check_file`): `rrkit.read` on any file either returns a `Recording` that passes
its own validation again (``dataclasses.replace`` re-runs it) with at least
``MIN_INTERVALS`` finite positive intervals, or raises `rrkit.InputError` naming the file;
never another exception, and within the time bound that hypothesis' ``deadline`` sets per
example. Warnings are errors, as in the test suite, except rrkit's own (a `QualityWarning` on
a noisy ECG is an outcome) and the named third-party deprecations of ``pyproject.toml``.

The strategies build files the way real exports go wrong: numbers in ms and s, decimal commas,
separators, header and preamble lines, quotes, BOMs and encodings, timestamps, gzip, symbol
columns, truncation at any byte; WFDB headers with signal files; EDF headers with data records.

``tests/test_fuzz.py`` runs a few examples of each in the suite. A deep run::

    python -m tests.fuzz --minutes 5

runs them until the time is up; each crash it finds is shrunk by hypothesis and saved into
``tests/fuzz-crashes/`` (the minimal file and a note of the exception) to become a regression
file in ``tests/data/bad/`` with its test.
"""

from __future__ import annotations

import argparse
import contextlib
import dataclasses
import gzip
import hashlib
import shutil
import sys
import tempfile
import time
import traceback
import warnings
from datetime import datetime, timedelta
from pathlib import Path

import numpy as np
from hypothesis import strategies as st

from rrkit import InputError, Recording, RrkitWarning, read
from rrkit.io._checks import MIN_INTERVALS

__all__ = ["bytes_files", "check_file", "edf_files", "text_files", "wfdb_files"]

CRASH_DIR = Path(__file__).parent / "fuzz-crashes"


# ---------------------------------------------------------------- the property
@contextlib.contextmanager
def _warnings_as_in_the_suite():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        warnings.simplefilter("ignore", RrkitWarning)  # QualityWarning is a RrkitWarning
        for module in ("neurokit2", "pingouin", "wfdb", "pyedflib", "dateutil"):
            warnings.filterwarnings("ignore", category=DeprecationWarning, module=module)
            warnings.filterwarnings("ignore", category=FutureWarning, module=module)
        yield


def check_outcome(path: Path, kwargs: dict) -> str:
    """Read ``path``; return ``"recording"`` or ``"input-error"``, else raise (the bug)."""
    with _warnings_as_in_the_suite():
        try:
            rec = read(path, **kwargs)
        except InputError as exc:
            error = exc
        else:
            error = None
    if error is not None:
        assert error.path is not None, f"InputError without a file: {error}"
        return "input-error"
    assert isinstance(rec, Recording)
    dataclasses.replace(rec)  # the recording passes its own validation again
    assert rec.n_intervals >= MIN_INTERVALS, rec.n_intervals
    assert np.isfinite(rec.rr_ms).all()
    assert (rec.rr_ms > 0).all()
    assert np.isfinite(rec.beat_times_s).all()
    assert rec.gaps.shape == rec.rr_ms.shape
    return "recording"


def check_file(files: dict[str, bytes], target: str, kwargs: dict, *,
               crash_dir: Path | None = None) -> str:
    """Write ``files`` into a fresh folder, read ``target`` with ``kwargs``, check the outcome.

    With ``crash_dir``, a failing case is copied there before the exception goes on (hypothesis
    then shrinks it; the last copy is the smallest).
    """
    folder = Path(tempfile.mkdtemp(prefix="rrkit-fuzz-"))
    try:
        for name, data in files.items():
            (folder / name).write_bytes(data)
        try:
            return check_outcome(folder / target, kwargs)
        except BaseException as exc:
            if crash_dir is not None and not isinstance(exc, KeyboardInterrupt):
                _save_crash(crash_dir, files, target, kwargs, exc)
            raise
    finally:
        shutil.rmtree(folder, ignore_errors=True)


def _save_crash(crash_dir: Path, files, target, kwargs, exc) -> None:
    digest = hashlib.sha256(repr((sorted(files.items()), target, kwargs)).encode()).hexdigest()
    case = crash_dir / f"{type(exc).__name__}-{digest[:10]}"
    case.mkdir(parents=True, exist_ok=True)
    for name, data in files.items():
        (case / name).write_bytes(data)
    (case / "CASE.txt").write_text(
        f"read({target!r}, **{kwargs!r})\n\n"
        + "".join(traceback.format_exception(type(exc), exc, exc.__traceback__)))
    (crash_dir / "LAST").write_text(case.name + "\n")


# ---------------------------------------------------------------- reader options
_SOME_KWARGS = st.fixed_dictionaries({}, optional={
    "kind": st.sampled_from(["auto", "rr", "peaks", "annotations"]),
    "unit": st.sampled_from(["auto", "ms", "s", "samples"]),
    "fs": st.sampled_from([250.0, 360.0, 1.0, 1e-3, 1e9]),
    "column": st.sampled_from([0, 1, 2, "rr_ms", "time", "ECG", "nope", -1]),
    "sep": st.sampled_from([",", ";", "\t", " ", "none"]),
    "decimal": st.sampled_from([".", ","]),
    "timestamp_column": st.sampled_from([0, 1, "timestamp", "nope"]),
    "break_s": st.sampled_from([None, 0.5, 2.0, 1e9]),
})
_KWARGS = st.one_of(st.just({}), _SOME_KWARGS)


# ---------------------------------------------------------------- arbitrary bytes
@st.composite
def bytes_files(draw):
    """(files, target, kwargs): any bytes under any reader's file name."""
    suffix = draw(st.sampled_from([".txt", ".csv", ".gz", ".edf", ".hea", ".atr", ".dat",
                                   ".qrs", ""]))
    data = draw(st.binary(max_size=1500))
    if draw(st.booleans()):  # often a text-looking start, so the text rules get to work
        data = draw(st.sampled_from([b"812\n790\n", b"rr_ms\n", b"\xef\xbb\xbf", b"\xff\xfe",
                                     b"\x1f\x8b", b"0       ", b"100 2 360 650000\n"])) + data
    name = "rec" + suffix
    files = {name: data}
    if suffix == ".atr" and draw(st.booleans()):
        files["rec.hea"] = b"rec 1 360 1000\nrec.dat 16 200 16 0 0 0 0 MLII\n"
    return files, name, draw(_KWARGS)


# ---------------------------------------------------------------- near-valid text
def _number(draw, unit: str, odd: bool) -> str:
    if unit == "ms":
        v = draw(st.floats(min_value=250, max_value=2000))
    else:
        v = draw(st.floats(min_value=0.25, max_value=2.0))
    style = draw(st.integers(0, 9))
    if odd and draw(st.integers(0, 15)) == 0:
        return draw(st.sampled_from(["nan", "NaN", "inf", "-inf", "", "NA", "8l5", "1e308",
                                     "-1e308", "0", "-800", "1e-320", "١٢٣", "0x10", "+",
                                     "1_000", "..", "1e", "9" * 40]))
    if style == 1:
        return str(int(v))
    if style == 2:
        return f"{v:.3e}"
    return f"{v:.{draw(st.integers(0, 6))}f}"


_HEADER_WORDS = ["rr_ms", "RR (ms)", "RR-Intervall (ms)", "ibi", "time_s", "time", "t (ms)",
                 "timestamp", "unix_time", "peak", "sample", "ecg", "MLII", "symbol", "type",
                 "quality", "x", "", "Zeit (s)", "rr", "nn"]
_ROLE_NAMES = {"rr": ["rr_ms", "RR (ms)", "ibi", "RR-Intervall (ms)"],
               "time": ["time_s", "Zeit (s)"], "iso": ["timestamp", "datetime"],
               "epoch": ["unix_time", "epoch"], "symbol": ["symbol", "type"],
               "text": ["note"]}
_PREAMBLE = ["Strap export 2026-03-01 07:00", "Device 4711", "# exported", "", "   ",
             "Name: nobody", "RR interval (ms)", "sep=;", "Date;Time"]


@st.composite
def text_files(draw):
    """(files, target, kwargs): text tables close to what devices and spreadsheets export."""
    n_cols = draw(st.integers(1, 4))
    sep = draw(st.sampled_from([",", ";", "\t", " ", "  ", "|"]))
    unit = draw(st.sampled_from(["ms", "s"]))
    broken = draw(st.booleans())  # half the files are valid, the other half broken somewhere
    roles = [draw(st.sampled_from(["rr", "rr", "rr", "time", "iso", "epoch", "symbol"]
                                  + ["text"] * broken)) for _ in range(n_cols)]
    odd, ragged, junk, jumps = (broken and draw(st.integers(0, 2)) == 0 for _ in range(4))
    comma = draw(st.integers(0, 3)) == 0 and (broken or sep != ",")
    quote = draw(st.integers(0, 4)) == 0
    start = datetime(2026, 3, 1, 7, 0) + timedelta(seconds=draw(st.integers(0, 10**6)))
    zone = draw(st.sampled_from(["", "Z", "+01:00", "-0500"]))
    t_s = 0.0
    rows = []
    for _ in range(draw(st.integers(0, 60)) if odd else draw(st.integers(4, 60))):
        rr = _number(draw, unit, odd)
        try:
            step = float(rr) / (1000 if unit == "ms" else 1)
        except ValueError:
            step = 0.8
        t_s += step if np.isfinite(step) and 0 < step < 1e5 else 0.8
        if jumps and draw(st.integers(0, 10)) == 0:
            t_s += draw(st.sampled_from([-3600.0, -1.0, 30.0, 3600.0]))  # breaks, clocks
        cells = []
        for role in roles:
            if role == "rr":
                cell = rr
            elif role == "time":
                cell = f"{t_s:.3f}"
            elif role == "iso":
                when = start + timedelta(seconds=t_s)
                cell = when.isoformat(sep=draw(st.sampled_from(["T", " "]))) + zone
            elif role == "epoch":
                cell = f"{start.timestamp() + t_s:.3f}"
            elif role == "symbol":
                cell = draw(st.sampled_from(["N", "V", "A", "+", "~", "|", "Q", "NN", ""]))
            else:
                cell = draw(st.text(alphabet="abc 1.,;\"'#\t-", max_size=6))
            if comma:
                cell = cell.replace(".", ",")
            if quote:
                cell = f'"{cell}"'
            cells.append(cell)
        if ragged and draw(st.integers(0, 10)) == 0:
            cells = cells[:-1] if len(cells) > 1 else [*cells, "9"]  # a ragged row
        row = sep.join(cells)
        if junk and draw(st.integers(0, 10)) == 0:
            row += draw(st.sampled_from([" # note", sep, "   ", ' "', "\x00", "\x07"]))
        rows.append(row)
    lines = [draw(st.sampled_from(_PREAMBLE)) for _ in range(draw(st.integers(0, 3)))]
    if broken and draw(st.booleans()):
        names = [draw(st.sampled_from(_HEADER_WORDS)) for _ in range(n_cols)]
        lines.append(sep.join(f'"{n}"' if quote else n for n in names))
    elif not broken and (n_cols > 1 or draw(st.booleans())):
        names = [draw(st.sampled_from(_ROLE_NAMES[role])) for role in roles]
        lines.append(sep.join(f'"{n}"' if quote else n for n in names))
    lines += rows
    if broken and rows and draw(st.integers(0, 3)) == 0:
        lines.insert(draw(st.integers(0, len(lines))), draw(st.sampled_from(["", "# c", "   "])))
    newline = draw(st.sampled_from(["\n", "\r\n", "\r"]))
    text = newline.join(lines) + (newline if draw(st.booleans()) else "")
    if draw(st.integers(0, 5)) == 0:
        text = "\ufeff" + text
    encoding = draw(st.sampled_from(["utf-8", "utf-8", "utf-16", "cp1252", "latin-1"]))
    if broken and draw(st.integers(0, 3)) == 0:
        text += draw(st.sampled_from(["é", "ü", "µs", "\u2212", "\u00a0"]))
    data = text.encode(encoding, errors="replace")
    if broken and draw(st.integers(0, 3)) == 0:
        data = data[:draw(st.integers(0, len(data)))]  # truncated at any byte
    suffix = draw(st.sampled_from([".txt", ".csv", ".tsv", ".txt.gz"]))
    if suffix.endswith(".gz"):
        data = gzip.compress(data, mtime=0)
        if broken and draw(st.integers(0, 3)) == 0:
            data = data[:draw(st.integers(0, len(data)))]
    return {"rec" + suffix: data}, "rec" + suffix, draw(_KWARGS) if broken else {}


# ---------------------------------------------------------------- WFDB records
def _ecg_like(n: int, fs_hz: float, seed: int) -> np.ndarray:
    """A spiky periodic signal (an R wave every ~0.8 s) with noise: enough for detection."""
    rng = np.random.default_rng(seed)
    t = np.arange(n) / max(fs_hz, 1.0)
    phase = (t / 0.8) % 1.0
    return np.exp(-((phase - 0.5) ** 2) / 2e-4) + 0.05 * rng.standard_normal(n)


@st.composite
def wfdb_files(draw):
    """(files, target, kwargs): a WFDB header (often almost right) with its signal file."""
    broken = draw(st.booleans())

    def pick(good: list, bad: list):
        return draw(st.sampled_from(good + bad if broken else good))

    fs = pick(["250", "360", "128"], ["0", "-5", "abc", "360/2", "1e9", ""])
    n_sig = pick([1, 1, 2], [0, 3, 40])
    n_samp = pick([5000, 7200], [0, 10, 2000, 10**9])
    record = f"rec {n_sig} {fs} {n_samp}"
    if draw(st.booleans()):
        record += pick([" 07:00:00 01/03/2026", " 07:00:00"], [" 25:61:00 32/13/2026", " x y"])
    fmt = pick(["16"], ["212", "80", "8", "311", "x", "0"])
    lines = [record]
    names = []
    for k in range(min(n_sig, 3) if draw(st.booleans()) else n_sig):
        gain = pick(["200", "200(0)/mV"], ["0", "-1", "abc", "1e400"])
        name = pick(["MLII", "V5", "ECG", "MCL1", "aVF"], ["ABP", "Resp", ""])
        names.append(name)
        lines.append(f"rec.dat {fmt} {gain} 16 0 {draw(st.integers(-5, 5))} 0 0 {name}".rstrip())
        if k > 5:
            break
    if draw(st.integers(0, 5)) == 0:
        lines.append(pick(["# comment", ""], ["junk line", "rec.dat"]))
    header = "\n".join(lines) + "\n"
    data_kind = pick(["ecg"], ["random", "empty"])
    width = max(len(names), 1)
    if data_kind == "ecg":
        try:
            fs_num = float(fs.split("/")[0]) if fs else 250.0
        except ValueError:
            fs_num = 250.0
        n = int(min(max(n_samp, 0), 5000)) if n_samp < 10**9 else 5000
        x = _ecg_like(n, fs_num if np.isfinite(fs_num) and fs_num > 0 else 250.0,
                      draw(st.integers(0, 9)))
        sig = np.repeat((x * 200).astype("<i2")[:, None], width, axis=1)
        data = sig.tobytes()
    elif data_kind == "random":
        data = draw(st.binary(max_size=4000))
    else:
        data = b""
    if broken and data and draw(st.integers(0, 3)) == 0:
        data = data[:draw(st.integers(0, len(data)))]
    files = {"rec.hea": header.encode("latin-1", errors="replace"), "rec.dat": data}
    target = draw(st.sampled_from(["rec.hea", "rec.hea", "rec.dat", "rec"]))
    kwargs = draw(st.fixed_dictionaries({}, optional={
        "fs": st.sampled_from([250.0, 360.0]), "column": st.sampled_from([0, 1, "V5", "ECG"]),
        "kind": st.sampled_from(["auto", "ecg", "rr"])})) if broken else {}
    return files, target, kwargs


# ---------------------------------------------------------------- EDF files
def _field(text: str, width: int) -> bytes:
    return text.encode("latin-1", errors="replace")[:width].ljust(width, b" ")


@st.composite
def edf_files(draw):
    """(files, target, kwargs): an EDF header (often almost right) with data records."""
    broken = draw(st.booleans())

    def pick(good: list, bad: list):
        return draw(st.sampled_from(good + bad if broken else good))

    n_sig = pick([1, 1, 2], [0, 3])
    n_rec = pick([20, 30], [0, 1, 5, -1, 10**7])
    duration = pick(["1"], ["0.5", "0", "-1", "abc", ""])
    per_rec = [pick([250, 256], [128, 1, 0, -5]) for _ in range(n_sig)]
    head = (_field(pick(["0"], ["1", "x"]), 8)
            + _field("X X X X", 80)
            + _field("Startdate 01-MAR-2026 X X X", 80)
            + _field(pick(["01.03.26"], ["31.02.26", "aa.bb.cc", ""]), 8)
            + _field(pick(["07.00.00"], ["25.61.00", ""]), 8)
            + _field(str(256 * (n_sig + 1) + pick([0], [256, -256, 1])), 8)
            + _field(pick([""], ["EDF+C", "EDF+D"]), 44)
            + _field(str(n_rec), 8) + _field(duration, 8) + _field(str(n_sig), 4))
    labels = [pick(["ECG", "EKG II", "V1"], ["Resp", "EDF Annotations", "ABP", ""])
              for _ in range(n_sig)]
    phys = [pick([("-5", "5")], [("5", "-5"), ("0", "0"), ("x", "1")]) for _ in range(n_sig)]
    dig = [pick([("-32768", "32767")], [("0", "0"), ("100", "-100")]) for _ in range(n_sig)]
    head += b"".join(_field(lab, 16) for lab in labels)
    head += b"".join(_field("", 80) for _ in range(n_sig))
    head += b"".join(_field("mV", 8) for _ in range(n_sig))
    head += b"".join(_field(p[0], 8) for p in phys) + b"".join(_field(p[1], 8) for p in phys)
    head += b"".join(_field(d[0], 8) for d in dig) + b"".join(_field(d[1], 8) for d in dig)
    head += b"".join(_field("", 80) for _ in range(n_sig))
    head += b"".join(_field(str(n), 8) for n in per_rec)
    head += b"".join(_field("", 32) for _ in range(n_sig))
    if broken and draw(st.integers(0, 3)) == 0:
        head = head[:draw(st.integers(0, len(head)))]
    records = max(0, min(n_rec, 30))
    if pick([True], [False]):
        seed = draw(st.integers(0, 9))
        # EDF stores each data record signal after signal: ECG-like in every channel
        chunks = []
        for r in range(records):
            for n in per_rec:
                n = max(n, 0)
                x = _ecg_like(n * records, float(max(n, 1)), seed)[r * n:(r + 1) * n]
                chunks.append((x * 3000).astype("<i2").tobytes())
        data = b"".join(chunks)
    else:
        data = draw(st.binary(max_size=4000))
    if broken and data and draw(st.integers(0, 3)) == 0:
        data = data[:draw(st.integers(0, len(data)))]
    suffix = pick([".edf"], [".bdf", ".rec"])
    kwargs = draw(st.fixed_dictionaries({}, optional={
        "fs": st.sampled_from([250.0, 128.0]), "column": st.sampled_from([0, 1, "ECG"]),
        "kind": st.sampled_from(["auto", "ecg", "peaks"])})) if broken else {}
    return {"rec" + suffix: head + data}, "rec" + suffix, kwargs


STRATEGIES = {"bytes": bytes_files, "text": text_files, "wfdb": wfdb_files, "edf": edf_files}


# ---------------------------------------------------------------- the deep run
def _run_one(name: str, *, seconds: float, deadline_ms: float, crash_dir: Path) -> int:
    """Run strategy ``name`` for about ``seconds``; return the number of examples tried."""
    from hypothesis import HealthCheck, Phase, given, settings

    count = 0
    stop_at = time.monotonic() + seconds

    @settings(max_examples=200, deadline=timedelta(milliseconds=deadline_ms),
              database=None, suppress_health_check=list(HealthCheck),
              phases=[Phase.generate, Phase.shrink])
    @given(case=STRATEGIES[name]())
    def run(case):
        nonlocal count
        count += 1
        files, target, kwargs = case
        check_file(files, target, kwargs, crash_dir=crash_dir)

    while time.monotonic() < stop_at:  # rounds of 200 examples, each with fresh random data
        run()
    return count


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m tests.fuzz", description=__doc__.split(
        "\n\n")[0])
    parser.add_argument("--minutes", type=float, default=2.0, help="total time (default 2)")
    parser.add_argument("--only", choices=sorted(STRATEGIES), action="append",
                        help="run only these strategies (repeatable)")
    parser.add_argument("--deadline-ms", type=float, default=5000.0,
                        help="time bound of one read (default 5000 ms)")
    parser.add_argument("--crash-dir", type=Path, default=CRASH_DIR)
    args = parser.parse_args(argv)
    names = args.only or list(STRATEGIES)
    share = args.minutes * 60.0 / len(names)
    failed = 0
    for name in names:
        t0 = time.monotonic()
        try:
            n = _run_one(name, seconds=share, deadline_ms=args.deadline_ms,
                         crash_dir=args.crash_dir)
            print(f"{name:<6} {n:>7} examples in {time.monotonic() - t0:6.1f} s: no crash",
                  flush=True)
        except Exception as exc:  # the shrunk failure: hypothesis re-raised it
            failed += 1
            last = (args.crash_dir / "LAST").read_text().strip() if (
                args.crash_dir / "LAST").exists() else "?"
            print(f"{name:<6} CRASH {type(exc).__name__}: {str(exc)[:200]}\n"
                  f"       smallest case: {args.crash_dir / last}", flush=True)
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
