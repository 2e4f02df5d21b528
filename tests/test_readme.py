"""Every command in the README is exercised here (issue 5).

Console blocks are re-run and their pasted output compared line by line, at the
README's width of 100 columns, in a scratch copy of cases/.  The Python example is
executed.  The set-up commands are checked against .ci/run and their exactlp
parts are run.
"""

import re
import shlex
import shutil

import pytest
from typer.testing import CliRunner

from exactlp.cli import app

from .conftest import ROOT

README = (ROOT / "README.md").read_text()


def console_blocks():
    for block in re.findall(r"```console\n(.*?)```", README, re.S):
        lines = block.rstrip("\n").split("\n")
        i = 0
        while i < len(lines):
            assert lines[i].startswith("$ "), lines[i]
            cmd = lines[i][2:]
            j = i + 1
            while j < len(lines) and not lines[j].startswith("$ "):
                j += 1
            yield cmd, lines[i + 1:j]
            i = j


def sh_blocks():
    return re.findall(r"```sh\n(.*?)```", README, re.S)


@pytest.fixture
def scratch(tmp_path, monkeypatch):
    shutil.copytree(ROOT / "cases", tmp_path / "cases")
    monkeypatch.chdir(tmp_path)
    return tmp_path


def run(cmd):
    args = shlex.split(cmd)
    assert args[0] in ("exactlp", ".venv/bin/exactlp")
    r = CliRunner().invoke(app, args[1:], env={"COLUMNS": "100", "NO_COLOR": "1", "TERM": "dumb"})
    return r.exit_code, r.stdout


def test_walk_through_output_is_real(scratch):
    seen = 0
    for cmd, expected in console_blocks():
        code, out = run(cmd)
        assert code == 0, (cmd, out)
        assert [line.rstrip() for line in out.rstrip("\n").split("\n")] == expected, cmd
        seen += 1
    assert seen >= 6


def test_exactly_two_setup_commands_and_ci_runs_the_test_one():
    blocks = sh_blocks()
    assert len(blocks) == 2
    main_cmd, test_cmd = (b.strip() for b in blocks)
    assert "\n" not in main_cmd and "\n" not in test_cmd
    assert "pytest" in test_cmd and "cases/" in main_cmd
    assert test_cmd in (ROOT / ".ci" / "run").read_text().splitlines()


def test_setup_command_exactlp_parts_run(scratch):
    main_cmd = sh_blocks()[0].strip()
    parts = [p.strip() for p in main_cmd.split("&&") if "exactlp " in p]
    assert len(parts) == 2
    for part in parts:
        code, out = run(part)
        assert code == 0, (part, out)


def test_python_example_runs(scratch):
    import subprocess
    import sys

    code = re.findall(r"```python\n(.*?)```", README, re.S)
    assert code
    for block in code:  # each example runs in its own interpreter, as a user would run it
        r = subprocess.run([sys.executable, "-"], input=block, text=True, capture_output=True, cwd=scratch)
        assert r.returncode == 0, r.stderr


def test_report_excerpt_is_real(scratch):
    # the README's excerpt of a sensitivity report is what the command writes
    ((cmd, block),) = re.findall(r"In `(exactlp sensitivity [^`]+ -o [^`]+)`.*?```yaml\n(.*?)```", README, re.S)
    code, _ = run(cmd)
    assert code == 0
    written = (scratch / shlex.split(cmd)[-1]).read_text().split("\n")
    # the README indents the block by two for the list item it sits in
    excerpt = [line[2:] for line in block.rstrip().split("\n")]
    starts = [i for i, line in enumerate(written) if line == excerpt[0]]
    assert any(written[i:i + len(excerpt)] == excerpt for i in starts), excerpt
