"""Rewrite the README's console blocks with what the commands print now.

    python tests/update_readme.py

Runs each ``$ exactlp ...`` line of every console block in a scratch copy of
cases/ at 100 columns without colour (as tests/test_readme.py does) and puts
the real output under it.  Review the diff before committing.
"""

from __future__ import annotations

import os
import re
import shlex
import shutil
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def main() -> None:
    sys.path.insert(0, str(ROOT))
    from typer.testing import CliRunner

    from exactlp.cli import app

    readme = (ROOT / "README.md").read_text()
    with tempfile.TemporaryDirectory() as tmp:
        shutil.copytree(ROOT / "cases", Path(tmp) / "cases")
        old = os.getcwd()
        os.chdir(tmp)
        try:
            def redo(match: re.Match) -> str:
                out = []
                for line in match.group(1).rstrip("\n").split("\n"):
                    if not line.startswith("$ "):
                        continue
                    args = shlex.split(line[2:])
                    r = CliRunner().invoke(app, args[1:], env={"COLUMNS": "100", "NO_COLOR": "1", "TERM": "dumb"})
                    out.append(line)
                    out.extend(x.rstrip() for x in r.stdout.rstrip("\n").split("\n"))
                return "```console\n" + "\n".join(out) + "\n```"

            readme = re.sub(r"```console\n(.*?)```", redo, readme, flags=re.S)
        finally:
            os.chdir(old)
    (ROOT / "README.md").write_text(readme)


if __name__ == "__main__":
    main()
