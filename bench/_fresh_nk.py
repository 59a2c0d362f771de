"""The neurokit2 side of the ``fresh-process`` case, as a script a neurokit2 user would run:
read one RR file, correct it with ``signal_fixpeaks``, compute the per-window metric set of the
windows-night case over the given window bounds and write a CSV (pandas).

    python -m bench._fresh_nk RR_FILE BOUNDS_JSON OUT_CSV
"""

from __future__ import annotations

import json
import sys


def main(argv=None) -> int:
    args = sys.argv[1:] if argv is None else argv
    path, bounds_path, out = args
    import pandas as pd

    from .cases.night_pipeline import _nk_pipeline

    with open(bounds_path, encoding="utf-8") as fh:
        bounds = [tuple(b) for b in json.load(fh)]
    rows = _nk_pipeline(path, bounds)
    pd.DataFrame(rows).to_csv(out, index=False)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
