"""`resolve_windows`: any spec (object, text, windows, lists) -> windows of one recording."""

from __future__ import annotations

from collections.abc import Iterable, Mapping

from ..errors import InputError
from ..recording import Recording
from ._model import Window, WindowSpec, _clip, _span
from ._syntax import SYNTAX_HELP, parse_window


def resolve_windows(spec, recording: Recording, *, clean_result=None) -> list[Window]:
    """Concrete windows of ``spec`` for ``recording``.

    Parameters
    ----------
    spec : WindowSpec, str, Window, or a sequence of these
        A spec object, the text syntax (`parse_window`), ready windows (clipped to the
        recording), or several of them (windows in the order given).
    recording : Recording
    clean_result : CleanResult, optional
        Needed by ``ClockTime(stable_s=...)``.

    Returns
    -------
    list of Window
        Every window lies inside ``[first beat, last beat]``.
    """
    if isinstance(spec, str):
        spec = parse_window(spec)
    if isinstance(spec, Window):
        span = _span(recording)
        return [] if span is None else [_clip(spec.label, spec.start_s, spec.end_s, span,
                                              breathing_hz=spec.breathing_hz, extra=spec.extra)]
    if isinstance(spec, WindowSpec):
        return spec.resolve(recording, clean_result=clean_result)
    if isinstance(spec, Iterable) and not isinstance(spec, (bytes, Mapping)):
        out: list[Window] = []
        for item in spec:
            out += resolve_windows(item, recording, clean_result=clean_result)
        return out
    raise InputError(f"windows must be a window spec, a text such as 'morning', a Window or a "
                     f"list of these; got {type(spec).__name__}", hint=SYNTAX_HELP)


