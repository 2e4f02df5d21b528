"""Reliability and security (issue 9): interrupted runs, hostile inputs, caps."""

import ast
import json
import os
import signal
import stat
import subprocess
import sys
import time
from fractions import Fraction
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

import exactlp
from exactlp.errors import InputError
from exactlp.limits import Limits

from .models import klee_minty

PACKAGE = Path(exactlp.__file__).parent


@pytest.fixture
def long_model(tmp_path):
    """A model whose solve under plain Dantzig takes a few seconds (2^15 - 1 pivots)."""
    p = tmp_path / "km.yaml"
    p.write_text(klee_minty(15))
    return p


def start_solve(model, cert, log):
    return subprocess.Popen(
        [sys.executable, "-m", "exactlp.cli", "solve", str(model), "--pricing", "dantzig",
         "--no-warm-start", "-c", str(cert), "-l", str(log)],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE)


def wait_for_pivots(path: Path, count: int = 20, timeout: float = 60) -> None:
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        if path.exists() and path.read_text().count("\n") > count:
            return
        time.sleep(0.05)
    raise AssertionError("the solve wrote no pivots in time")


@pytest.mark.parametrize("sig, code", [(signal.SIGINT, 130), (signal.SIGTERM, 143)])
def test_interrupt_closes_the_log_and_writes_no_certificate(tmp_path, long_model, sig, code):
    cert, log = tmp_path / "c.yaml", tmp_path / "l.jsonl"
    cert.write_text("an earlier certificate\n")
    p = start_solve(long_model, cert, log)
    wait_for_pivots(Path(str(log) + ".partial"))
    p.send_signal(sig)
    out, err = p.communicate(timeout=60)
    assert p.returncode == code
    assert err.decode().startswith("exactlp: interrupted: no certificate written; the log is")
    records = [json.loads(line) for line in log.read_text().splitlines()]
    assert records[-1]["record"] == "close" and records[-1]["outcome"] == "interrupted"
    assert cert.read_text() == "an earlier certificate\n"



def test_a_reader_that_goes_away_ends_the_run_quietly(tmp_path):
    # `exactlp solve ... | head`: once the reader has closed the pipe, the screen
    # report stops with status 141 (as if killed by SIGPIPE) and no message, never
    # an "internal error"; the certificate written before the report is whole.
    from .conftest import CASES

    cert = tmp_path / "c.yaml"
    p = subprocess.Popen([sys.executable, "-m", "exactlp.cli", "solve", str(CASES / "drought.yaml"),
                          "--no-warm-start", "-c", str(cert)], stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    p.stdout.close()  # gone before the first line is written
    err = p.stderr.read()
    assert p.wait(timeout=60) == 141 and err == b""
    import exactlp

    assert exactlp.verify(exactlp.load(str(CASES / "drought.yaml")), str(cert)).valid

def test_sigkill_leaves_a_log_readable_to_the_last_pivot(tmp_path, long_model):
    cert, log = tmp_path / "c.yaml", tmp_path / "l.jsonl"
    cert.write_text("an earlier certificate\n")
    p = start_solve(long_model, cert, log)
    partial = Path(str(log) + ".partial")
    wait_for_pivots(partial, 50)
    p.kill()
    p.wait(timeout=30)
    text = partial.read_text()
    lines = text.split("\n")
    # every line is a whole record but the last, which SIGKILL can cut: Linux
    # ends a write to a file early at a page boundary when a fatal signal is
    # pending (seen here once: the file cut at 51 x 4096 bytes, within a record);
    # then the file does not end with a newline, and what is cut is left out
    cut = lines.pop()
    assert (cut == "") == text.endswith("\n")
    assert cut == "" or len(text.encode()) % 4096 == 0, len(text.encode())
    records = [json.loads(line) for line in lines]
    assert records[0]["record"] == "header" and records[-1]["record"] == "pivot"
    assert [r["iteration"] for r in records[2:]] == list(range(1, len(records) - 1))
    assert not log.exists()
    assert cert.read_text() == "an earlier certificate\n"
    assert [f for f in os.listdir(tmp_path) if f.endswith(".tmp")] == []


def test_no_eval_exec_pickle_or_unsafe_yaml_in_the_package():
    banned_calls = {"eval", "exec", "compile", "__import__"}
    for path in PACKAGE.rglob("*.py"):
        tree = ast.parse(path.read_text())
        for node in ast.walk(tree):
            if isinstance(node, ast.Call) and isinstance(node.func, ast.Name):
                assert node.func.id not in banned_calls, (path, node.func.id)
            if isinstance(node, ast.Attribute):
                assert node.attr not in ("load", "unsafe_load", "full_load") or not (
                    isinstance(node.value, ast.Name) and node.value.id == "yaml"), path
            if isinstance(node, (ast.Import, ast.ImportFrom)):
                names = [a.name for a in node.names] + [getattr(node, "module", None) or ""]
                assert not any(n and n.split(".")[0] in ("pickle", "marshal", "shelve") for n in names), path


def test_object_tags_and_code_do_nothing(write, tmp_path):
    marker = tmp_path / "touched"
    text = (f"maximize: x\nvariables:\n  x: !!python/object/apply:os.system ['touch {marker}']\n")
    with pytest.raises(InputError):
        exactlp.load(write("evil.yaml", text))
    text = f"maximize: __import__('os').system('touch {marker}')\nvariables: {{x: {{}}}}\n"
    with pytest.raises(InputError):
        exactlp.load(write("evil2.yaml", text))
    assert not marker.exists()


@pytest.mark.parametrize(
    "limits, text, message",
    [
        (Limits(max_variables=2), "minimize: 0\nvariables: {a: {}, b: {}, c: {}}\n",
         "variables: 3 variables, more than the limit of 2"),
        (Limits(max_constraints=1), "minimize: 0\nvariables: {a: {}}\nconstraints: {r: a <= 1, s: a >= 0}\n",
         "constraints: 2 constraints, more than the limit of 1"),
        (Limits(max_nonzeros=2), "minimize: 0\nvariables: {a: {}, b: {}}\nconstraints: {r: a + b <= 1, s: a >= 0}\n",
         "constraints.s: more than the limit of 2 nonzeros"),
        (Limits(max_depth=3), "minimize: 0\nvariables: {a: {b: {c: {d: 1}}}}\n",
         "nesting is deeper than the limit of 3"),
        (Limits(max_exponent=10), "minimize: 1e11 a\nvariables: {a: {}}\n",
         "minimize: '1e11' has exponent 11, beyond the limit of ±10"),
        (Limits(max_expression_chars=4), "minimize: a + b\nvariables: {a: {}, b: {}}\n",
         "m.yaml:1:11: minimize: expression has 5 characters, more than the limit of 4"),
        (Limits(max_expression_chars=9),
         "minimize: 0\nvariables: {a: {}, b: {}}\nconstraints:\n  r: a + b <= 1\n",
         "m.yaml:4:6: constraints.r: expression has 10 characters, more than the limit of 9"),
    ],
)
def test_resource_caps(limits, text, message):
    from exactlp.io import model_from_text

    with pytest.raises(InputError) as exc:
        model_from_text(text, "m.yaml", limits)
    assert str(exc.value).endswith(message)


def test_default_cap_takes_a_large_network_objective():
    # a generated network of 3,000 rows has an objective of 1.09 million
    # characters (cases/generated/make_network.py --sources 1200 --districts 1800
    # --reach 40); the default cap takes one well past that, the exact sum kept
    from exactlp.expr import parse_expression
    from exactlp.limits import DEFAULT_LIMITS

    names = [f"pipe_{i:05d}_" + "x" * 180 for i in range(6000)]
    text = " + ".join(f"{i % 7 + 1}/{i % 5 + 2} {n}" for i, n in enumerate(names))
    assert 1_100_000 < len(text) < DEFAULT_LIMITS.max_expression_chars
    got = parse_expression(text).as_dict()
    assert len(got) == 6000
    assert got[names[8]] == Fraction(2, 5) and type(got[names[8]]) is Fraction


# --- fuzzing: any input gives a valid object or our own error -------------------------------
FUZZ = int(os.environ.get("EXACTLP_FUZZ_EXAMPLES", "300"))
fuzz = settings(max_examples=FUZZ, deadline=None, suppress_health_check=[HealthCheck.too_slow])

yamlish = st.text(alphabet=st.sampled_from(list("abxyz019 :-{}[],'\"#&*!|>\n\t.=<+/e")), max_size=200)


@fuzz
@given(st.one_of(st.binary(max_size=300), yamlish.map(lambda s: s.encode())))
def test_fuzz_yaml_model_loader(tmp_path_factory, data):
    p = tmp_path_factory.mktemp("f") / "m.yaml"
    p.write_bytes(data)
    try:
        exactlp.load(p)
    except InputError as e:
        assert "\n" not in str(e)


mpsish = st.lists(st.sampled_from([
    "NAME X", "ROWS", " N obj", " L r1", " G r2", " E r3", "COLUMNS", "    x obj 1 r1 2", "    y r2 -1.5",
    "    x r9 1", "RHS", "    rhs r1 4", "    rhs obj 3", "RANGES", "    rng r3 -2", "BOUNDS", " UP b x 4",
    " MI b y", " FR b x", " BV b x", "ENDATA", "garbage", "    x", "", "* comment", " UP b x 1e999",
]), max_size=25).map("\n".join)


@fuzz
@given(mpsish)
def test_fuzz_mps_reader(text):
    from exactlp.io import mps_from_text

    try:
        mps_from_text(text)
    except InputError as e:
        assert "\n" not in str(e)


@fuzz
@given(st.one_of(yamlish, st.text(max_size=200)))
def test_fuzz_certificate_reader_and_verifier(text):
    from exactlp.certificate import parse_certificate_text
    from exactlp.io import model_from_text

    m = model_from_text("minimize: x\nvariables: {x: {}}\nconstraints: {c: x >= 1}\n")
    try:
        cert = parse_certificate_text(text, "c.yaml")
    except InputError:
        return
    v = exactlp.verify(m, cert)  # never raises on a mapping: invalid is an answer
    assert v.valid in (True, False)


@fuzz
@given(st.dictionaries(st.sampled_from(["format", "status", "model", "sense", "primal", "duals", "farkas",
                                        "activities", "objective", "ray", "reduced_costs", "dual_objective"]),
                       st.recursive(st.one_of(st.none(), st.text(max_size=8), st.integers()),
                                    lambda inner: st.one_of(st.lists(inner, max_size=3),
                                                            st.dictionaries(st.text(max_size=3), inner, max_size=3)),
                                    max_leaves=8)))
def test_fuzz_verifier_on_shaped_garbage(cert):
    from exactlp.io import model_from_text

    m = model_from_text("minimize: x\nvariables: {x: {}}\nconstraints: {c: x >= 1}\n")
    cert = dict(cert, format="exactlp-certificate/1", model={"fingerprint": m.fingerprint}, sense="minimize")
    v = exactlp.verify(m, cert)
    assert v.valid in (True, False)


def test_deep_json_nesting_is_our_error(cli, write):
    deep = "[" * 100000 + "]" * 100000
    cert = write("c.json", "{\"a\": " + deep + "}")
    code, out, err = cli("verify", str(Path(__file__).parent.parent / "cases" / "drought.yaml"), cert)
    assert (code, out) == (2, "") and err == f"exactlp: {cert}: nesting is too deep\n"
    log = write("l.jsonl", "{\"record\": " + deep + "}\n")
    code, out, err = cli("trace", log)
    assert (code, out) == (2, "") and err == f"exactlp: {log}:1:1: not a log record: nesting is too deep\n"


def test_atomic_writes_get_the_permissions_of_any_new_file(tmp_path):
    # a certificate is meant to be handed on: a new file gets 0o666 less the
    # umask, as open() would give it (mkstemp's 0o600 had kept it from the group
    # and other accounts), and a file written over keeps the mode it had
    from exactlp.io import atomic

    old = os.umask(0o022)
    try:
        atomic.write_atomic(tmp_path / "new.cert.yaml", "a\n")
        assert stat.S_IMODE(os.stat(tmp_path / "new.cert.yaml").st_mode) == 0o644
        os.umask(0o077)
        atomic.write_atomic(tmp_path / "private.cert.yaml", "a\n")
        assert stat.S_IMODE(os.stat(tmp_path / "private.cert.yaml").st_mode) == 0o600
        os.chmod(tmp_path / "new.cert.yaml", 0o640)
        atomic.write_atomic(tmp_path / "new.cert.yaml", "b\n")
        assert stat.S_IMODE(os.stat(tmp_path / "new.cert.yaml").st_mode) == 0o640
        assert (tmp_path / "new.cert.yaml").read_text() == "b\n"
    finally:
        os.umask(old)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["new.cert.yaml", "private.cert.yaml"]


def test_interrupt_or_termination_outside_a_solve_is_one_line_and_leaves_no_file(tmp_path, monkeypatch, capsys):
    # every command runs in cli._Run: SIGINT (KeyboardInterrupt) and SIGTERM end it
    # with one line and 130 / 143, and a termination in the middle of an atomic
    # write (here: while the data are synced) leaves neither the file nor its
    # temporary behind; the SIGTERM handler is put back afterwards
    import typer

    from exactlp import cli
    from exactlp.io import atomic

    before = signal.getsignal(signal.SIGTERM)
    with pytest.raises(typer.Exit) as exc:
        with cli._Run():
            raise KeyboardInterrupt
    assert exc.value.exit_code == 130
    assert capsys.readouterr().err == "exactlp: interrupted; no file is left half-written\n"

    def fsync_then_terminated(fd):
        os.kill(os.getpid(), signal.SIGTERM)
        time.sleep(1)  # (the handler runs at the next bytecode; never reached)

    monkeypatch.setattr(atomic.os, "fsync", fsync_then_terminated)
    target = tmp_path / "report.yaml"
    with pytest.raises(typer.Exit) as exc:
        with cli._Run():
            atomic.write_atomic(target, "text\n")
    assert exc.value.exit_code == 143
    assert capsys.readouterr().err == "exactlp: terminated; no file is left half-written\n"
    assert list(tmp_path.iterdir()) == []
    assert signal.getsignal(signal.SIGTERM) is before


def test_a_report_written_as_it_is_made_is_the_same_text(tmp_path, monkeypatch):
    # dump_yaml_to writes dump_yaml's characters in chunks of lines: the same
    # file for any chunk size, an empty document included; and a writer that
    # fails part way leaves no file, the target's old text and no temporary
    from exactlp import certificate
    from exactlp.analysis import conflict
    from exactlp.io import atomic
    from exactlp.reports import conflict_report

    from .conftest import CASES

    m = exactlp.load(CASES / "grants_overcommitted.yaml")
    docs = [{}, [], {"a": []}, {"a": {}, "b": [1, None, True, "x y"]}, conflict_report(m, conflict(m))]
    for size in (1, 2, 3, 7, certificate.SINK_LINES):
        monkeypatch.setattr(certificate, "SINK_LINES", size)
        for k, doc in enumerate(docs):
            path = tmp_path / f"d{k}.yaml"
            atomic.write_atomic(path, lambda fh, doc=doc: certificate.dump_yaml_to(doc, fh))
            assert path.read_text(encoding="utf-8") == certificate.dump_yaml(doc)
    assert certificate.dump_yaml({}) == "\n" and certificate.dump_yaml(docs[-1]).count("\n") > 50

    target = tmp_path / "report.yaml"
    target.write_text("old\n")
    before = sorted(p.name for p in tmp_path.iterdir())

    def fails(fh):
        fh.write("half")
        raise OSError("disk full")

    with pytest.raises(OSError):
        atomic.write_atomic(target, fails)
    assert target.read_text() == "old\n" and sorted(p.name for p in tmp_path.iterdir()) == before
