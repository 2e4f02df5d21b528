"""The live status line appears on a terminal only (issue 5).

On a terminal, ``solve`` shows the phase, the steps so far, the objective to 8
digits and the time on one line of stderr, at most every 0.2 s, and the
analysis commands say which stage they are at; the line is erased when the
command ends.  With ``--json``, or when stderr is not a terminal, nothing is
written there.  The subprocess tests give stderr a pseudo-terminal; the
throttle and the text are checked on ``StatusLine`` itself with a pinned clock.
"""

import json
import os
import pty
import re
import subprocess
import sys
from fractions import Fraction

import pytest
from rich.console import Console

from exactlp import render
from exactlp.solver.events import PhaseEnd, Pivot

from .conftest import CASES

MODEL = str(CASES / "generated" / "water_network.yaml")
SMALL = str(CASES / "emissions.yaml")
CLEAR = b"\r\x1b[1A\x1b[2K"  # rich's last write: back to the line and erase it


def _on_a_terminal(*args: str) -> tuple[int, bytes, bytes]:
    """Run the CLI with stderr on a pseudo-terminal; (exit status, stdout, what the terminal got)."""
    master, slave = pty.openpty()
    p = subprocess.run([sys.executable, "-m", "exactlp.cli", *args], stdout=subprocess.PIPE,
                       stderr=slave, env=dict(os.environ, COLUMNS="100", TERM="xterm"), timeout=120)
    os.close(slave)
    seen = b""
    try:
        while chunk := os.read(master, 65536):
            seen += chunk
    except OSError:
        pass
    os.close(master)
    return p.returncode, p.stdout, seen


def _shown(seen: bytes) -> list[str]:
    """The texts the status line showed, in order (each after its spinner frame)."""
    return re.findall(r"\x1b\[0m ([^\r\n\x1b]+)", seen.decode())


# Which texts a run shows depends on when rich's refresh thread draws the line;
# the tests below accept any of them in order, and pin the text itself on
# StatusLine with a pinned clock (the last test).
STEP = re.compile(r"phase [12] · \d+ steps? · objective ≈ -?[0-9.e+-]+ · \d+\.\d s")


@pytest.mark.parametrize("model", [MODEL, SMALL])
def test_status_line_on_a_terminal_only(model):
    code, out, seen = _on_a_terminal("solve", "--no-warm-start", model)
    assert code == 0 and b"optimal" in out
    shown = _shown(seen)
    assert shown and all(t == "solving…" or STEP.fullmatch(t) for t in shown), shown
    assert seen.endswith(CLEAR)
    assert b"\x1b[" not in out  # stdout is a pipe: plain text


def test_no_status_line_when_not_a_terminal():
    p = subprocess.run([sys.executable, "-m", "exactlp.cli", "solve", MODEL], capture_output=True, timeout=120)
    assert p.returncode == 0 and p.stderr == b""


@pytest.mark.parametrize("command", ["solve", "sensitivity", "ranges"])
def test_no_status_line_with_json_even_on_a_terminal(command):
    code, out, seen = _on_a_terminal(command, "--json", SMALL)
    assert code == 0 and seen == b""
    assert json.loads(out)["model"]["name"] == "Emission allowance allocation"


@pytest.mark.parametrize("args", [("sensitivity", SMALL), ("ranges", SMALL),
                                  ("conflict", str(CASES / "grants_overcommitted.yaml"))])
def test_the_analyses_say_their_stage_on_a_terminal(args):
    # "working…" at first, then the analysis's own stages (each named after the
    # command), then the report's check, which comes last
    code, out, seen = _on_a_terminal(*args)
    assert code == 0 and b"\x1b[" not in out
    shown = _shown(seen)
    check = "checking every claim as a reviewer would"
    assert shown and all(t == "working…" or t.startswith(f"{args[0]}: ") or t == check for t in shown), shown
    assert check not in shown[:-1]
    assert seen.endswith(CLEAR)


def _pivot(iteration: int, phase: int, objective: Fraction) -> Pivot:
    return Pivot(iteration=iteration, phase=phase, entering=("x", "a"), reduced_cost=Fraction(-1), direction=1,
                 leaving=None, leaving_bound="upper", ratio=None, step=Fraction(1), objective=objective,
                 degenerate=False, rule="Dantzig")


class _Status:
    def __init__(self) -> None:
        self.shown: list[str] = []

    def update(self, text: str) -> None:
        self.shown.append(text)


def test_the_status_line_updates_at_most_every_fifth_of_a_second(monkeypatch):
    # the clock's readings: 0.0 at the start, then one per event; 0.4 - 0.2 is exactly 0.2 in binary
    clock = iter([0.0, 0.2, 0.3, 0.4, 0.5, 2.5])
    monkeypatch.setattr(render.time, "monotonic", lambda: next(clock))
    line = render.StatusLine(Console(width=100))
    line.status = _Status()
    line(_pivot(1, 1, Fraction(76, 10)))  # 0.2 after the start: shown
    line(PhaseEnd(phase=1, objective=Fraction(0), pivots=1))  # not a pivot: no reading, nothing shown
    line(_pivot(2, 1, Fraction(1, 3)))  # 0.1 after the last shown: skipped
    line(_pivot(3, 2, Fraction(-123456789, 10)))  # exactly 0.2 after it: shown
    line(_pivot(4, 2, Fraction(5)))  # 0.1 after: skipped
    line(_pivot(5, 2, Fraction(2, 3)))  # 2.1 after: shown
    assert line.status.shown == [
        "phase 1 · 1 step · objective ≈ 7.6 · 0.2 s",
        "phase 2 · 3 steps · objective ≈ -12345679 · 0.4 s",
        "phase 2 · 5 steps · objective ≈ 0.66666667 · 2.5 s",
    ]
