"""Only regular files are read: named pipes, sockets and devices are refused before any open.

Opening a FIFO for reading blocks until a writer appears (POSIX open(2)); a guard thread opens
the write end after a while so that a regression fails on its message instead of hanging the
suite.
"""

from __future__ import annotations

import contextlib
import os
import socket
import sys
import threading

import pytest

from rrkit import InputError, read
from rrkit.cli import main
from rrkit.io._text import load_table

pytestmark = pytest.mark.skipif(sys.platform == "win32", reason="POSIX special files")


@contextlib.contextmanager
def _unblocking(fifo, after_s: float = 20.0):
    """Open and close the write end of ``fifo`` after ``after_s`` if a reader is stuck on it."""
    def release():
        with contextlib.suppress(OSError):  # ENXIO: nobody is waiting, nothing to release
            os.close(os.open(fifo, os.O_WRONLY | os.O_NONBLOCK))

    timer = threading.Timer(after_s, release)
    timer.start()
    try:
        yield
    finally:
        timer.cancel()


@pytest.fixture
def fifo(tmp_path):
    path = tmp_path / "rr.txt"
    os.mkfifo(path)
    return path


def test_fifo_is_refused_by_read_and_the_tokenizer(fifo):
    with _unblocking(fifo):
        with pytest.raises(InputError, match=r"rr\.txt: is a named pipe \(FIFO\), not a regular"):
            read(fifo)
        with pytest.raises(InputError, match="named pipe"):
            load_table(fifo)


def test_fifo_does_not_hang_info(fifo, capsys):
    with _unblocking(fifo):
        assert main(["info", str(fifo)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("rrkit: error: ")
    assert "is a named pipe (FIFO), not a regular file" in err
    assert err.count("\n") == 1


def test_fifo_among_good_files_in_info(fifo, tmp_path, capsys):
    good = tmp_path / "good.txt"
    good.write_text("812\n790\n805\n821\n")
    with _unblocking(fifo):
        assert main(["info", str(good), str(fifo)]) == 2  # the good file is still described
    out, err = capsys.readouterr()
    assert "beats      5 beats, 4 intervals" in out
    assert "named pipe" in err


def test_wfdb_record_with_a_fifo_signal_file(tmp_path):
    (tmp_path / "rec.hea").write_text("rec 1 250 5000\nrec.dat 16 200 16 0 0 0 0 ECG\n")
    os.mkfifo(tmp_path / "rec.dat")
    with _unblocking(tmp_path / "rec.dat"), pytest.raises(InputError,
                                                          match=r"rec\.dat: is a named pipe"):
        read(tmp_path / "rec.hea")


def test_socket_and_device_are_refused(tmp_path):
    path = tmp_path / "s.csv"
    sock = socket.socket(socket.AF_UNIX)
    try:
        sock.bind(str(path))
        with pytest.raises(InputError, match="is a socket, not a regular file"):
            read(path)
    finally:
        sock.close()
    if os.path.exists("/dev/zero"):  # endless zeros: must not be read at all
        with pytest.raises(InputError, match="is a character device"):
            read("/dev/zero")
