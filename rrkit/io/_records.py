"""Binary physiological records: WFDB signals and annotations, EDF/EDF+ (and BDF) signals.

wfdb and pyedflib are optional (extras ``rrkit[wfdb]`` and ``rrkit[edf]``) and imported only
here, inside the functions. These formats carry the sampling rate in their header; an ``fs=``
that disagrees with it is an error rather than a silent choice.

Channel choice (``column=`` a label or a 0-based index): otherwise the first channel whose label
names an ECG lead (``ECG``, ``EKG``, ``MLII``, ``II``, ``V1``..``V6``...), else the only channel.
"""

from __future__ import annotations

import contextlib
import os
import warnings
from collections import Counter
from datetime import datetime
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError
from ..recording import ReadInfo, Recording
from ._checks import check_enough
from ._detect import is_ecg_lead
from ._ecg import recording_from_signal
from ._pulse import PULSE_ANNOTATORS, pick_pulse_channel, recording_from_pulse_signal
from ._wfdb_symbols import BEAT_SYMBOLS

__all__ = ["WFDB_ANNOTATION_EXTENSIONS", "read_edf", "read_wfdb_annotations", "read_wfdb_record",
           "wfdb_prefix"]

#: annotation file extensions recognised without kind="annotations"
WFDB_ANNOTATION_EXTENSIONS = (".atr", ".ann", ".qrs", ".ecg", ".man", ".pu", ".pu0", ".pu1",
                              ".wqrs", ".gqrs", ".sqrs", ".ari")


def _need(module: str, extra: str):
    import importlib

    try:
        return importlib.import_module(module)
    except ImportError:
        raise InputError(f"reading this file needs the optional package {module}",
                         hint=f"pip install 'rrkit[{extra}]'") from None


def _channel_reason(labels: list[str], k: int, column, signal: str = "ecg") -> str:
    if column is not None:
        return f"channel {labels[k]!r} given"
    if len(labels) == 1:
        return "the only channel"
    what = "a pulse wave" if signal == "ppg" else "an ECG lead"
    return f"first channel labelled as {what} ({labels[k]!r})"


def _from_signal(signal: str, sig, **kw) -> Recording:
    """Beats of one channel: R peaks of an ECG, or pulse peaks of a PPG (``signal="ppg"``)."""
    if signal == "ppg":
        kw["what"] = kw["what"].replace("ECG lead", "pulse channel").replace("ECG channel",
                                                                             "pulse channel")
        return recording_from_pulse_signal(sig, **kw)
    return recording_from_signal(sig, **kw)


@contextlib.contextmanager
def _quiet_wfdb():
    """Hide deprecation notices that wfdb's own use of pandas raises (not the user's business)."""
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", category=DeprecationWarning, module=r"wfdb(\.|$)")
        warnings.filterwarnings("ignore", category=FutureWarning, module=r"wfdb(\.|$)")
        yield


def _pick_channel(labels: list[str], column, path: str, signal: str = "ecg") -> int:
    if column is not None:
        if isinstance(column, (int, np.integer)) and not isinstance(column, bool):
            k = int(column)
            if not 0 <= k < len(labels):
                raise InputError(f"column={column!r} is out of range; channels (0-based): "
                                 f"{labels}", path=path)
            return k
        want = str(column).strip().lower()
        for k, lab in enumerate(labels):
            if lab.strip().lower() == want:
                return k
        if want.isdigit() and int(want) < len(labels):
            return int(want)
        raise InputError(f"column={column!r} is not a channel of this record; channels: "
                         f"{labels}", path=path)
    if signal == "ppg":
        k = pick_pulse_channel(labels)
        if k is not None:
            return k
    else:
        for k, lab in enumerate(labels):
            if is_ecg_lead(lab):
                return k
    if len(labels) == 1:
        return 0
    what = "a pulse wave" if signal == "ppg" else "an ECG lead"
    raise InputError(f"no channel is labelled as {what}; channels: {labels}", path=path,
                     hint="pass column=, a channel label or 0-based index")


def _check_fs(given: float | None, header: float, path: str) -> float:
    if given is not None and abs(float(given) - float(header)) > 1e-9 * float(header):
        raise InputError(f"fs={given!r} Hz disagrees with the {header:g} Hz in the file header",
                         path=path, hint="leave fs out: the header gives the sampling rate")
    return float(header)


def wfdb_prefix(path: str | os.PathLike[str]) -> str:
    """Record prefix (``.../100``) of a WFDB file path (``100.hea``, ``100.dat``, ``100``)."""
    p = Path(path)
    if p.suffix.lower() in (".hea", ".dat") or p.suffix.lower() in WFDB_ANNOTATION_EXTENSIONS:
        return str(p.with_suffix(""))
    return str(p)


def _wfdb_start(header) -> datetime | None:
    base = getattr(header, "base_datetime", None)
    if base is not None:
        return base
    return None


def read_wfdb_record(path: str, *, fs_hz: float | None, column, detector: str,
                     subject: str | None, kind_decided_by: str,
                     signal: str = "ecg") -> Recording:
    """Detect beats in one channel of a WFDB record (``.hea`` + signal file): R peaks of an
    ECG lead, or pulse peaks of a pulse wave with ``signal="ppg"``."""
    with _quiet_wfdb():
        wfdb = _need("wfdb", "wfdb")
    prefix = wfdb_prefix(path)
    if not Path(prefix + ".hea").is_file():
        raise InputError(f"WFDB header {prefix + '.hea'} not found, expected beside the signal",
                         path=path)
    try:
        with _quiet_wfdb():
            header = wfdb.rdheader(prefix)
        labels = [str(s) if s is not None else "" for s in (header.sig_name or [])]
        k = _pick_channel(labels, column, path, signal)
        with _quiet_wfdb():
            rec = wfdb.rdrecord(prefix, channels=[k])
    except InputError:
        raise
    except (OSError, ValueError, IndexError, KeyError, TypeError, EOFError,
            ZeroDivisionError, OverflowError) as exc:  # wfdb's reactions to a broken record
        reason = f"unsupported value {exc}" if isinstance(exc, KeyError) else str(exc)
        raise InputError(f"cannot read the WFDB record ({reason})", path=path) from None
    fs = _check_fs(fs_hz, rec.fs, path)
    sig = np.asarray(rec.p_signal[:, 0], dtype=np.float64)
    extra: dict[str, Any] = {"format": "WFDB", "record": Path(prefix).name,
                             "signal_unit": (rec.units or [None])[0],
                             "n_samples": int(sig.size),
                             "column_chosen_by": _channel_reason(labels, k, column, signal)}
    return _from_signal(signal, sig, fs_hz=fs, path=str(path), detector=detector,
                                 subject=subject, start=_wfdb_start(header),
                                 kind_decided_by=kind_decided_by, column=labels[k],
                                 extra=extra, what=f"ECG lead {labels[k]}")


def read_wfdb_annotations(path: str, *, fs_hz: float | None, subject: str | None,
                          kind_decided_by: str) -> Recording:
    """Reference beats from a WFDB annotation file, beat symbols only (see `BEAT_SYMBOLS`)."""
    with _quiet_wfdb():
        wfdb = _need("wfdb", "wfdb")
    p = Path(path)
    ext = p.suffix.lstrip(".") or "atr"
    prefix = str(p.with_suffix("")) if p.suffix else str(p)
    if not Path(f"{prefix}.{ext}").is_file():
        raise InputError(f"annotation file {prefix}.{ext} not found", path=path)
    try:
        with _quiet_wfdb():
            ann = wfdb.rdann(prefix, ext)
    except (OSError, ValueError, IndexError, KeyError, EOFError) as exc:
        raise InputError(f"cannot read the WFDB annotation file ({exc}), expected WFDB "
                         "annotation format", path=path) from None
    header = None
    if Path(prefix + ".hea").is_file():
        try:
            with _quiet_wfdb():
                header = wfdb.rdheader(prefix)
        except (OSError, ValueError):
            header = None
    file_fs = ann.fs if ann.fs else (header.fs if header is not None else None)
    if file_fs is None:
        if fs_hz is None:
            raise InputError("the annotation file does not state its sampling rate and no "
                             "header was found beside it", path=path, hint="pass fs= in Hz")
        fs = float(fs_hz)
    else:
        fs = _check_fs(fs_hz, float(file_fs), path)
    samples = np.asarray(ann.sample, dtype=np.int64)
    symbols = np.asarray(ann.symbol, dtype=str)
    is_beat = np.isin(symbols, list(BEAT_SYMBOLS))
    skipped = Counter(symbols[~is_beat].tolist())
    samples, symbols = samples[is_beat], symbols[is_beat]
    check_enough(samples.size - 1, path=path, what="beat annotations")
    d = np.diff(samples)
    if np.any(d <= 0):
        j = int(np.flatnonzero(d <= 0)[0]) + 1
        raise InputError(f"beat annotation {j} at sample {samples[j]} does not follow the "
                         f"previous one at sample {samples[j - 1]}, expected increasing beats",
                         path=path)
    counts = Counter(symbols.tolist())
    extra: dict[str, Any] = {
        "format": "WFDB annotations",
        "annotator": ext,
        "beat_symbol_counts": ", ".join(f"{s} x{c}" for s, c in counts.most_common()),
        "non_beat_annotations_skipped": int(sum(skipped.values())),
        "non_beat_symbols": ", ".join(f"{s} x{c}" for s, c in skipped.most_common()),
    }
    if ext.lower() in PULSE_ANNOTATORS:
        extra["pulse_derived"] = True
        extra["pulse_derived_by"] = f"annotator {ext!r} marks pulses, not QRS complexes"
    info = ReadInfo(kind="annotations", kind_decided_by=kind_decided_by, unit="samples",
                    unit_decided_by="WFDB annotations count samples", fs_hz=fs, column=None,
                    extra=extra)
    return Recording.from_peak_times(samples / fs, start=_wfdb_start(header) if header else None,
                                     subject=subject, source=str(path), info=info,
                                     beat_symbols=symbols)


def read_edf(path: str, *, fs_hz: float | None, column, detector: str, subject: str | None,
             kind_decided_by: str, signal: str = "ecg") -> Recording:
    """Detect beats in the ECG channel of an EDF, EDF+ or BDF file."""
    pyedflib = _need("pyedflib", "edf")
    try:
        reader = pyedflib.EdfReader(str(path))
    except OSError as exc:
        # pyedflib puts the path in front of its reason; the message names the file once
        reason = str(exc).removeprefix(f"{path}:").strip() or type(exc).__name__
        raise InputError(f"cannot read as EDF ({reason}), expected an EDF/EDF+ file",
                         path=path) from None
    try:
        labels = [str(s).strip() for s in reader.getSignalLabels()]
        k = _pick_channel(labels, column, path, signal)
        fs = _check_fs(fs_hz, reader.getSampleFrequency(k), path)
        sig = np.asarray(reader.readSignal(k), dtype=np.float64)
        start = reader.getStartdatetime()
        extra: dict[str, Any] = {"format": "EDF", "signal_unit": reader.getPhysicalDimension(k),
                                 "n_samples": int(sig.size), "channels": ", ".join(labels),
                                 "column_chosen_by": _channel_reason(labels, k, column, signal)}
    finally:
        reader.close()
    return _from_signal(signal, sig, fs_hz=fs, path=str(path), detector=detector,
                                 subject=subject, start=start, kind_decided_by=kind_decided_by,
                                 column=labels[k], extra=extra, what=f"ECG channel {labels[k]}")
