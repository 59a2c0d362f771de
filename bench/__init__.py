"""rrkit's benchmark suite: every stage side by side with neurokit2, on the same inputs, in one
run, with the compared outputs checked before any time is reported.

Run from the repository root::

    python -m bench               # every case (under 10 minutes on 2 cores)
    python -m bench --quick       # tiny sizes: the smoke run of the test suite

Not part of the package and not part of the tests (only its smoke run is). See README.md here.
"""
