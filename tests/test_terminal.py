"""The live status line appears on a terminal only (issue 5)."""

import os
import pty
import subprocess
import sys

from .conftest import CASES

MODEL = str(CASES / "generated" / "water_network.yaml")


def test_status_line_on_a_terminal_only():
    master, slave = pty.openpty()
    p = subprocess.run([sys.executable, "-m", "exactlp.cli", "solve", MODEL], stdout=subprocess.PIPE,
                       stderr=slave, env=dict(os.environ, COLUMNS="100", TERM="xterm"), timeout=120)
    os.close(slave)
    seen = b""
    try:
        while chunk := os.read(master, 65536):
            seen += chunk
    except OSError:
        pass
    os.close(master)
    assert p.returncode == 0
    assert "solving".encode() in seen or b"phase" in seen
    assert b"\x1b[" not in p.stdout  # stdout is a pipe: plain text


def test_no_status_line_when_not_a_terminal():
    p = subprocess.run([sys.executable, "-m", "exactlp.cli", "solve", MODEL], capture_output=True, timeout=120)
    assert p.returncode == 0 and p.stderr == b""
