"""A mutation sweep: python tests/mutate.py MODULE TEST [TEST ...]

Makes one small change at a time to MODULE (a path such as exactlp/verifier.py),
each in a copy of this checkout (the checkout itself is never touched), and runs
the given test files against it with ``pytest -x``.  A change the tests do not
notice is a survivor: either the tests miss a real fault there, or the change
cannot alter what the code computes (an equivalent mutant, such as a threshold
that only picks the quicker of two exact ways); each survivor is printed with
its line for a person to decide which.  A run that takes longer than
``EXACTLP_MUTANT_SECONDS`` (300 unless set) is stopped and counted as killed
(a change that makes a loop endless, such as a step of 0).
``EXACTLP_MUTANTS=3,17,40`` runs only those mutants (by the numbers a sweep
prints), to try the survivors of one sweep against more tests, and
``EXACTLP_MUTANT_LINES=68-150`` only those on the module's lines 68 to 150
(a part of a large module, against the tests of that part; pytest's own
options such as ``-k conflict`` may follow the test files).

The changes, one per run: a comparison turned into its neighbour (``<`` and
``<=``, ``==`` and ``!=``, ``is`` and ``is not``, ``in`` and ``not in``), an
arithmetic operator into another (``+`` and ``-``, ``*`` and ``/``), ``and``
and ``or`` swapped, a ``not`` or a unary minus dropped, the integers 0, 1, 2 and
64 changed (0 and 1 swapped, 2 to 1, 64 to 0) and ``True`` and ``False`` swapped.
The module is rewritten from its syntax tree (``ast.unparse``), so its comments
are gone in the copy; nothing else differs.
"""

from __future__ import annotations

import ast
import os
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SWAP_CMP = {ast.Lt: ast.LtE, ast.LtE: ast.Lt, ast.Gt: ast.GtE, ast.GtE: ast.Gt, ast.Eq: ast.NotEq,
            ast.NotEq: ast.Eq, ast.Is: ast.IsNot, ast.IsNot: ast.Is, ast.In: ast.NotIn, ast.NotIn: ast.In}
SWAP_BIN = {ast.Add: ast.Sub, ast.Sub: ast.Add, ast.Mult: ast.Div, ast.Div: ast.Mult, ast.FloorDiv: ast.Mult}
SWAP_INT = {0: 1, 1: 0, 2: 1, 64: 0}


def sites(tree: ast.AST) -> list[tuple[ast.AST, int | None]]:
    """Every place one change can be made, in the order of ``ast.walk``."""
    out: list[tuple[ast.AST, int | None]] = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Compare):
            out += [(node, i) for i, op in enumerate(node.ops) if type(op) in SWAP_CMP]
        elif isinstance(node, ast.BinOp) and type(node.op) in SWAP_BIN:
            out.append((node, None))
        elif isinstance(node, ast.BoolOp) or (isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.Not, ast.USub))):
            out.append((node, None))
        elif isinstance(node, ast.Constant) and (type(node.value) is bool or
                                                 (type(node.value) is int and node.value in SWAP_INT)):
            out.append((node, None))
    return out


def mutant(tree: ast.AST, node: ast.AST, i: int | None) -> str:
    """The module's text with one change at ``node`` (the tree is left as it was)."""
    if isinstance(node, ast.Compare):
        saved = node.ops[i]
        node.ops[i] = SWAP_CMP[type(saved)]()
        try:
            return ast.unparse(tree)
        finally:
            node.ops[i] = saved
    if isinstance(node, (ast.BinOp, ast.BoolOp, ast.UnaryOp)):
        saved = node.op
        if isinstance(node, ast.BinOp):
            node.op = SWAP_BIN[type(saved)]()
        elif isinstance(node, ast.BoolOp):
            node.op = ast.Or() if isinstance(saved, ast.And) else ast.And()
        else:
            node.op = ast.UAdd()  # `+x` for `-x`; for `not x`, `+x` keeps x's truth: the not is gone
        try:
            return ast.unparse(tree)
        finally:
            node.op = saved
    saved = node.value
    node.value = (not saved) if type(saved) is bool else SWAP_INT[saved]
    try:
        return ast.unparse(tree)
    finally:
        node.value = saved


def main(argv: list[str]) -> int:
    if len(argv) < 2:
        print(__doc__.splitlines()[0], file=sys.stderr)
        return 2
    module, tests = argv[0], argv[1:]
    source = (ROOT / module).read_text()
    tree = ast.parse(source)
    places = sites(tree)
    limit = float(os.environ.get("EXACTLP_MUTANT_SECONDS", "300"))
    only = os.environ.get("EXACTLP_MUTANTS")
    chosen = {int(k) for k in only.split(",")} if only else set(range(len(places)))
    if lines := os.environ.get("EXACTLP_MUTANT_LINES"):
        first, last = (int(x) for x in lines.split("-"))
        chosen = {k for k in chosen if first <= places[k][0].lineno <= last}
    print(f"{module}: {len(places)} mutants, {len(chosen & set(range(len(places))))} run, "
          f"against {' '.join(tests)}", flush=True)
    survivors = []
    with tempfile.TemporaryDirectory() as tmp:
        copy = Path(tmp) / "checkout"
        shutil.copytree(ROOT, copy, ignore=shutil.ignore_patterns(".git", ".venv", "__pycache__", "*.egg-info",
                                                                    ".pytest_cache", ".hypothesis"))
        target = copy / module
        env = {**os.environ, "PYTHONPATH": str(copy)}
        for k, (node, i) in enumerate(places):
            if k not in chosen:
                continue
            target.write_text(mutant(tree, node, i))
            try:
                code = subprocess.run([sys.executable, "-m", "pytest", "-x", "-q", "-p", "no:cacheprovider", *tests],
                                      cwd=copy, env=env, capture_output=True, text=True, timeout=limit).returncode
                verdict = "killed" if code else "SURVIVED"
            except subprocess.TimeoutExpired:
                code, verdict = -1, "timeout"
            text = (ast.get_source_segment(source, node) or "").replace("\n", " ")[:70]
            print(f"{k:4} line {node.lineno:4} {type(node).__name__:9} {verdict:8} {text}", flush=True)
            if not code:
                survivors.append((k, node.lineno, text))
        target.write_text(source)
    print(f"{len(survivors)} of {len(chosen & set(range(len(places))))} survived" + "".join(f"\n  {k:4} line {n}: {t}" for k, n, t in survivors)
          + (f"\nagain: EXACTLP_MUTANTS={','.join(str(k) for k, _, _ in survivors)}" if survivors else ""))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
