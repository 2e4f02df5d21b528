"""Shared fixtures: the Netlib folder, a CLI runner at a pinned width, model files."""

from __future__ import annotations

import csv
import os
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
CASES = ROOT / "cases"


def netlib_dir() -> Path | None:
    """../shared/netlib beside the repository (or $EXACTLP_NETLIB)."""
    env = os.environ.get("EXACTLP_NETLIB")
    for cand in ([Path(env)] if env else []) + [ROOT.parent / "shared" / "netlib"]:
        if (cand / "optimal-values.csv").is_file():
            return cand
    return None


NETLIB = netlib_dir()
needs_netlib = pytest.mark.skipif(
    NETLIB is None, reason="../shared/netlib is absent: the Netlib LP set is not beside this checkout"
)


def netlib_table() -> dict[str, dict]:
    """optimal-values.csv (source: the Netlib LP readme, as copied in ../shared/netlib)."""
    if NETLIB is None:
        return {}
    with open(NETLIB / "optimal-values.csv", newline="") as fh:
        return {row["name"]: row for row in csv.DictReader(fh)}


@pytest.fixture
def cli(monkeypatch):
    """Invoke the CLI with a pinned width and no colour; returns (code, stdout, stderr)."""
    from typer.testing import CliRunner

    from exactlp.cli import app

    try:  # (click before 8.2 mixes stderr into stdout unless told not to; 8.2 keeps them apart)
        runner = CliRunner(mix_stderr=False)
    except TypeError:
        runner = CliRunner()

    def run(*args: str):
        r = runner.invoke(app, [str(a) for a in args], env={"COLUMNS": "120", "NO_COLOR": "1", "TERM": "dumb"})
        return r.exit_code, r.stdout, r.stderr

    return run


@pytest.fixture
def write(tmp_path):
    """Write a text file into the test's folder and return its path."""

    def _write(name: str, text: str | bytes) -> str:
        p = tmp_path / name
        if isinstance(text, bytes):
            p.write_bytes(text)
        else:
            p.write_text(text, encoding="utf-8")
        return str(p)

    return _write
