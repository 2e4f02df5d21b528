"""The command line (issue 5): every command and exit code, pinned width, no colour."""

import json
import os
import signal
from pathlib import Path

import pytest

import exactlp

from .conftest import CASES

DROUGHT = str(CASES / "drought.yaml")
INFEASIBLE = str(CASES / "grants_overcommitted.yaml")
UNBOUNDED = str(CASES / "pipeline_forgotten_cap.yaml")


def lines(text):
    return [line.rstrip() for line in text.splitlines()]


def test_version(cli):
    assert cli("--version") == (0, f"exactlp {exactlp.__version__}\n", "")


def test_help_lists_the_commands(cli):
    code, out, _ = cli("--help")
    assert code == 0
    for name in ("solve", "verify", "check", "show", "trace", "import"):
        assert name in out
    assert "--install-completion" in out and "--show-completion" in out  # (the README offers it)


@pytest.mark.parametrize("command", ["solve", "verify", "check", "show", "trace", "import"])
def test_every_command_has_help_with_an_example(cli, command):
    code, out, _ = cli(command, "--help")
    assert code == 0 and "Example" in out


def test_check(cli):
    code, out, err = cli("check", DROUGHT)
    m = exactlp.load(DROUGHT)
    assert (code, err) == (0, "")
    assert lines(out) == [
        f"model        {DROUGHT} is valid",
        "name         Lower valley drought allocation",
        "objective    maximize, 3 terms",
        "variables    4 (0 free, 0 fixed)",
        "constraints  4 (0 equalities, 0 ranged)",
        "nonzeros     12",
        f"fingerprint  {m.fingerprint}",
    ]


def test_check_shows_the_name_as_written_and_counts_in_words(cli, write):
    # text from the model reaches the screen as written: ':smile:' is not an emoji
    # code to the screen, '[b]' no markup; one term, one equality
    path = write("plan.yaml", 'name: "Plan :smile: [b]B[/b]"\nmaximize: x\nvariables: {x: {upper: 3}}\n'
                              "constraints:\n  cap: x == 2\n")
    code, out, err = cli("check", path)
    assert (code, err) == (0, "")
    assert lines(out)[1:5] == [
        "name         Plan :smile: [b]B[/b]",
        "objective    maximize, 1 term",
        "variables    1 (0 free, 0 fixed)",
        "constraints  1 (1 equality, 0 ranged)",
    ]
    code, out, _ = cli("solve", path)
    assert code == 0 and lines(out)[0].startswith("model      Plan :smile: [b]B[/b]  (sha256:")


def test_show(cli):
    code, out, _ = cli("show", DROUGHT)
    assert code == 0
    out = lines(out)
    assert out[0] == "Model: Lower valley drought allocation"
    assert "Objective: maximize 41/2 orchard + 17 pasture + 23 town" in out
    assert any(line.split() == ["orchard", "120", "900", "ML", "western", "district,", "tree", "crops"] for line in out)
    assert any(line.split()[:2] == ["west_canal", "orchard"] and line.endswith("<= 2101/2") for line in out)


def test_solve_optimal_report(cli, tmp_path):
    cert, log = tmp_path / "c.yaml", tmp_path / "l.jsonl"
    code, out, err = cli("solve", DROUGHT, "-c", cert, "-l", log)
    assert (code, err) == (0, "")
    out = lines(out)
    assert out[1] == "outcome      optimal: proven by primal and dual feasibility with a zero gap"
    assert out[2] == "objective    257335/8"
    assert out[3] == "             ≈ 32166.875  (decimal rendering to 12 digits)"
    assert out[5] == "check        the certificate passed the independent verifier"
    assert any(line.split() == ["town", "[ML]", "640", "350", "640", "6", "at", "upper"] for line in out)
    assert any(line.split() == ["release_cap", "1800", "-inf", "1800", "743/40", "binding"] for line in out)
    assert out[-1].startswith("Caution: this is the proven outcome of the model as written")
    assert cert.exists() and log.exists() and not (tmp_path / "l.jsonl.partial").exists()


def test_solve_json(cli):
    code, out, _ = cli("solve", DROUGHT, "--json")
    doc = json.loads(out)
    assert code == 0
    assert doc["status"] == "optimal" and doc["objective"] == "257335/8" and doc["verified"] is True
    assert doc["objective_decimal"] == "32166.875"
    assert doc["primal"]["town"] == "640" and doc["duals"]["release_cap"] == "743/40"


def test_solve_infeasible_names_the_clash(cli):
    code, out, _ = cli("solve", INFEASIBLE)
    assert code == 0  # a proven outcome
    out = lines(out)
    assert out[1] == "outcome  infeasible: proven by a Farkas combination of the constraints"
    assert any(line.split()[:2] == ["fund", "-1"] for line in out)
    assert "Adding these rules with these weights gives 0 >= 1, which no allocation can satisfy." in out


def test_solve_unbounded_shows_the_ray(cli):
    code, out, _ = cli("solve", UNBOUNDED)
    assert code == 0
    out = lines(out)
    assert out[1] == "outcome  unbounded: proven by a feasible point and an improving ray"
    assert any(line.split() == ["swap", "[kcm/d]", "0", "0", "inf", "1"] for line in out)


def test_limit_exit_3_and_no_certificate(cli, tmp_path):
    cert = tmp_path / "c.yaml"
    cert.write_text("an earlier good certificate\n")
    code, out, _ = cli("solve", CASES / "generated" / "water_network.yaml", "--iteration-limit", "3", "--no-warm-start", "-c", cert)
    assert code == 3
    assert "stopped: iteration limit reached; nothing is proven" in out
    assert cert.read_text() == "an earlier good certificate\n"  # untouched


def test_pricing_choice_and_bad_pricing(cli):
    code, out, _ = cli("solve", DROUGHT, "--pricing", "bland")
    assert code == 0 and ["objective", "257335/8"] in [line.split() for line in lines(out)]
    code, out, err = cli("solve", DROUGHT, "--pricing", "fastest")
    assert (code, out) == (2, "")
    assert err == "exactlp: pricing: unknown pricing rule 'fastest' (choose guarded, hybrid, bland, dantzig)\n"


def test_refuses_to_write_over_the_model(cli, tmp_path):
    model = tmp_path / "m.yaml"
    model.write_text(open(DROUGHT).read())
    code, _, err = cli("solve", model, "-c", model)
    assert code == 2 and err == f"exactlp: {model}: refusing to write over the model file\n"
    assert model.read_text() == open(DROUGHT).read()


def test_verify_valid_invalid_unusable(cli, tmp_path):
    cert = tmp_path / "c.yaml"
    assert cli("solve", DROUGHT, "-c", cert)[0] == 0
    code, out, _ = cli("verify", DROUGHT, cert)
    assert code == 0
    assert lines(out)[:2] == [
        f"pass  model fingerprint: {exactlp.load(DROUGHT).fingerprint}",
        "pass  primal feasibility: 4 bounds and 4 constraints hold exactly",
    ]
    assert f"valid: {cert} proves that {DROUGHT} is optimal" in lines(out)
    bad = tmp_path / "bad.yaml"
    bad.write_text(cert.read_text().replace('town: "640"', 'town: "639"'))
    code, out, _ = cli("verify", DROUGHT, bad)
    assert code == 1
    assert "FAIL  certificate: activities.release_cap: stated 1800, but A x gives 1799" in lines(out)
    assert f"invalid: {bad} does not prove its claim for {DROUGHT}" in lines(out)
    other = CASES / "grants.yaml"
    code, out, _ = cli("verify", other, cert)
    assert code == 1
    assert (f"FAIL  certificate: fingerprint: the certificate is for {exactlp.load(DROUGHT).fingerprint}, "
            f"the model given is {exactlp.load(other).fingerprint}") in lines(out)
    junk = tmp_path / "junk.yaml"
    junk.write_text("- not\n- a certificate\n")
    code, out, err = cli("verify", DROUGHT, junk)
    assert (code, out) == (2, "") and err == f"exactlp: {junk}: a certificate must be a mapping\n"


def test_verify_json(cli, tmp_path):
    cert = tmp_path / "c.json"
    assert cli("solve", INFEASIBLE, "-c", cert, "--certificate-format", "json")[0] == 0
    code, out, _ = cli("verify", INFEASIBLE, cert, "--json")
    doc = json.loads(out)
    assert code == 0 and doc["valid"] is True and doc["status"] == "infeasible"
    assert [c["name"] for c in doc["checks"]] == ["model fingerprint", "combination", "contradiction"]


def test_trace_table_and_one_pivot(cli, tmp_path):
    log = tmp_path / "l.jsonl"
    assert cli("solve", DROUGHT, "-l", log, "--tableau")[0] == 0
    code, out, _ = cli("trace", log)
    assert code == 0
    out = lines(out)
    assert any(line.split()[:4] == ["1", "2", "town", "↑"] and "bound" in line for line in out)
    assert out[-1] == "closed: optimal, objective 257335/8, pivots 0 + 2, bound flips 1"
    code, out, _ = cli("trace", log, "--pivot", "2")
    assert code == 0
    assert "Pivot 2" in out and "Tableau before the pivot" in out
    code, out, err = cli("trace", log, "--pivot", "9")
    assert (code, out, err) == (2, "", "exactlp: --pivot: the log has no pivot 9 (it has 3)\n")


def test_trace_shows_a_dual_pivots_bound_flips(cli, write, tmp_path):
    from .models import FLIPS

    model = write("flips.yaml", FLIPS)  # the model of tests/test_dual.py's hand-derived flips
    log = tmp_path / "f.jsonl"
    assert cli("solve", model, "-l", log, "--no-warm-start")[0] == 0
    code, out, _ = cli("trace", log)
    assert code == 0
    assert any(line.split()[:7] == ["1", "1", "x3", "↑", "r", "->", "lower"] and "(+2 flipped)" in line
               for line in lines(out))
    code, out, _ = cli("trace", log, "--pivot", "1")
    assert code == 0
    assert any(line.split() == ["flipped", "x1", "->", "upper,", "x2", "->", "upper"] for line in lines(out))


def test_trace_bad_log(cli, write):
    p = write("l.jsonl", "not json\n")
    code, _, err = cli("trace", p)
    assert code == 2 and err.startswith(f"exactlp: {p}:1:1: not a log record:")


def test_internal_error_is_one_line_exit_4(cli, monkeypatch):
    import exactlp.solver

    def boom(*a, **k):
        raise ZeroDivisionError("simulated")

    monkeypatch.setattr(exactlp.solver, "solve", boom)
    code, out, err = cli("solve", DROUGHT)
    assert code == 4
    assert err == "exactlp: internal error: ZeroDivisionError: simulated (run again with --debug for the traceback)\n"


def test_no_colour_codes_when_piped(cli):
    _, out, _ = cli("solve", DROUGHT)
    assert "\x1b[" not in out


def test_solve_screen_says_the_warm_start_needs_the_extra(cli, write, tmp_path, monkeypatch):
    # pinned width, no colour: on a model of 50 rows or more, with the warm start
    # left to its default, a missing float extra is said on the screen (and only
    # there: the certificate is that of the cold solve asked for by name); not
    # on a smaller model, nor when the cold solve is asked for
    import exactlp.floatlp as floatlp

    rows = "\n".join(f"  r{i}: x{i} + x{i + 1} <= {i + 3}" for i in range(50))
    text = ("maximize: " + " + ".join(f"x{i}" for i in range(51)) + "\nvariables:\n"
            + "\n".join(f"  x{i}: {{upper: 2}}" for i in range(51)) + "\nconstraints:\n" + rows + "\n")
    path = write("fifty.yaml", text)
    monkeypatch.setattr(floatlp, "highs_available", lambda: False)

    def warm_line(*args):
        code, out, _ = cli("solve", *args)
        assert code == 0
        lines = [x.split(None, 2)[2] for x in out.splitlines() if x.lstrip().startswith("warm start")]
        return lines[0] if lines else None

    assert warm_line(path, "-c", tmp_path / "auto.cert") == (
        "off: the exactlp[fast] extra is not installed; with it, models of 50 rows or more start "
        "from a basis a floating-point solver suggests, re-proven exactly")
    assert warm_line(path, "--no-warm-start", "-c", tmp_path / "cold.cert") is None
    assert (tmp_path / "auto.cert").read_bytes() == (tmp_path / "cold.cert").read_bytes()
    assert warm_line(CASES / "berth.yaml") is None  # (fewer than 50 rows)


def test_solve_screen_says_what_became_of_the_warm_start(cli, write, tmp_path):
    # pinned width, no colour: the "warm start" line of the solve summary, for a
    # suggestion accepted and for one asked for that never came
    from exactlp.floatlp import highs_available

    if not highs_available():
        pytest.skip("the warm start needs highspy")
    code, out, _ = cli("solve", CASES / "berth.yaml", "--warm-start", "-c", tmp_path / "a.cert")
    assert code == 0
    line = next(x for x in out.splitlines() if x.lstrip().startswith("warm start"))
    assert line.split(None, 2)[2] == ("accepted: the suggested basis is exactly primal feasible "
                                      "(a suggested starting basis, re-proven exactly)")
    path = write("huge.yaml", "minimize: x\nvariables: {x: {}}\nconstraints:\n  r: 1e400 x >= 1\n")
    code, out, _ = cli("solve", path, "--warm-start", "-c", tmp_path / "b.cert")
    assert code == 0
    line = next(x for x in out.splitlines() if x.lstrip().startswith("warm start"))
    assert line.split(None, 2)[2] == ("rejected: the model holds a number beyond the floating-point range; "
                                      "no float solve was made (the exact solve started from its own slack basis)")


def test_help_and_check_import_nothing_heavy(tmp_path):
    # `exactlp --help` must not pay for the readers, the solver or the numeric
    # libraries, and `exactlp check` on a small model not for the solver or the
    # float side (issue 6: fast start-up; the figures are in the benchmark)
    import subprocess
    import sys

    heavy = ("gmpy2", "numpy", "scipy", "highspy", "sympy", "yaml", "exactlp.io", "exactlp.solver",
             "exactlp.verifier", "exactlp.floatlp")
    probe = ("import sys\nsys.argv = ['exactlp'] + sys.argv[1:]\nfrom exactlp.cli import main\n"
             "try:\n    main()\nexcept SystemExit:\n    pass\n"
             f"print('LOADED', sorted(m for m in {heavy!r} if m in sys.modules), file=sys.stderr)\n")

    def loaded(*args):
        p = subprocess.run([sys.executable, "-c", probe, *args], capture_output=True, text=True, timeout=60)
        return p.stderr.strip().splitlines()[-1]

    assert loaded("--help") == "LOADED []"
    assert loaded("check", str(CASES / "drought.yaml")) == "LOADED ['exactlp.io', 'yaml']"
    # the help is plain: neither rich nor the command-line library's rich layout
    # (about 80 ms of start-up) is loaded for it
    probe = probe.replace(repr(heavy), repr(("rich", "typer.rich_utils", "markdown_it")))
    assert loaded("--help") == "LOADED []"
    assert loaded("solve", "--help") == "LOADED []"


def test_help_is_plain_keeps_bracketed_text_and_names_values_as_the_readme_does(cli):
    code, out, _ = cli("solve", "--help")
    assert code == 0 and "\u256d" not in out  # no boxes
    # rich markup used to eat '[fast]', leaving "(exactlp extra)"
    assert "(exactlp[fast] extra)" in " ".join(out.replace("floating-\n", "floating-").split())
    for shown in ("-c, --certificate CERT", "-l, --log LOG", "--pricing RULE", "--iteration-limit N",
                  "--time-limit S", "--certificate-format yaml|json", "--digits N", "--rows N"):
        assert shown in out, shown
    # the examples keep one command a line
    assert "\n    exactlp solve cases/drought.yaml\n" in out
    # (the usage line's marks around arguments are the command-line library's own,
    # and differ between its versions: 'MODEL [VAR]' or '{MODEL} [VAR]...')
    code, out, _ = cli("ranges", "--help")
    usage = out.splitlines()[0]
    assert code == 0 and usage.startswith("Usage: exactlp ranges [OPTIONS] ") and "MODEL" in usage and "VAR" in usage
    assert "\\[" not in out  # no markup escapes left in plain text (older versions of it did that)


@pytest.mark.parametrize("args", [
    ("solve", DROUGHT, "-c", "{dir}"),
    ("solve", DROUGHT, "-l", "{dir}"),
    ("sensitivity", DROUGHT, "-o", "{dir}"),
    ("ranges", DROUGHT, "-o", "{dir}"),
])
def test_a_folder_as_output_is_refused_before_any_work(cli, tmp_path, args):
    folder = tmp_path / "out"
    folder.mkdir()
    code, out, err = cli(*[str(a).replace("{dir}", str(folder)) for a in args])
    assert (code, out) == (2, "")
    assert err == f"exactlp: {folder}: is a folder; give a file name\n"
    assert list(folder.iterdir()) == [] and sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_import_to_a_folder_is_refused(cli, tmp_path):
    folder = tmp_path / "out"
    folder.mkdir()
    code, _, err = cli("import", CASES / "depot.mps", "-o", folder)
    assert code == 2 and err == f"exactlp: {folder}: is a folder; give a file name\n"
    assert list(folder.iterdir()) == []


@pytest.mark.parametrize("args, where, names", [
    (("solve",), "solve: ", "model"),
    (("solve", DROUGHT, "--digits", "abc"), "solve: ", "--digits"),
    (("solve", DROUGHT, "--time-limit", "-1"), "solve: ", "--time-limit"),
    (("solve", DROUGHT, "--no-such-option"), "solve: ", "--no-such-option"),
    (("verify", DROUGHT), "verify: ", "cert"),
    (("sovle", DROUGHT), "", "sovle"),
    (("--no-such-option",), "", "--no-such-option"),
    (("solve", DROUGHT, "--digits", "0"), "solve: ", "--digits"),
    (("solve", DROUGHT, "--iteration-limit", "-1"), "solve: ", "--iteration-limit"),
    (("trace", "run.log.jsonl", "--pivot", "0"), "trace: ", "--pivot"),
])
def test_usage_errors_are_one_line(cli, args, where, names):
    # (the middle of the line is the command-line library's own wording, which its
    # versions change; exactlp's frame around it is pinned: the command named once,
    # a root-level error names none, and no hint of another command's option)
    code, out, err = cli(*args)
    assert (code, out) == (2, "")
    assert err.count("\n") == 1 and err.endswith("\n")
    helper = f"exactlp {args[0]} -h" if where else "exactlp -h"
    assert err.startswith(f"exactlp: {where}") and err.endswith(f" (see '{helper}')\n")
    assert names in err.lower()
    middle = err[len(f"exactlp: {where}"):-len(f" (see '{helper}')\n")]
    assert not middle.startswith(("exactlp", "solve", "trace")) and ";" not in middle and "None" not in middle


def test_the_lowest_limits_and_digits_allowed_are_taken(cli):
    # --iteration-limit 0 stops before the first step (exit 3, nothing proven), a
    # time limit under a second is a limit like any other, --digits 1 renders one
    code, out, _ = cli("solve", DROUGHT, "--iteration-limit", "0")
    assert code == 3 and lines(out)[1:3] == ["outcome  stopped: iteration limit reached; nothing is proven",
                                             "pivots   phase 1: 0, phase 2: 0, bound flips: 0"]
    code, out, _ = cli("solve", DROUGHT, "--time-limit", "0.5", "--digits", "1")
    assert code == 0 and ["≈", "3e+4", "(decimal", "rendering", "to", "1", "digits)"] in [x.split() for x in lines(out)]


def test_a_bare_command_prints_the_help(cli):
    # (on stderr with exit 2, as a usage error, from click 8.2 on; on stdout with
    # exit 0 before it: from memory of the command-line library's change log, so
    # both are taken)
    code, out, err = cli()
    assert code in (0, 2)
    out, rest = (err, out) if code == 2 else (out, err)
    assert rest == "" and out.startswith("Usage: exactlp [OPTIONS] COMMAND [ARGS]...")
    for name in ("solve", "verify", "check", "show", "trace", "import", "sensitivity", "ranges", "conflict"):
        assert f"\n  {name} " in out


INTERNAL = [  # each command, its arguments, and the first library function it calls
    ("check", [DROUGHT], "exactlp.cli._load"),
    ("show", [DROUGHT], "exactlp.cli._load"),
    ("solve", [DROUGHT], "exactlp.cli._load"),
    ("verify", [DROUGHT, "c.yaml"], "exactlp.cli._load"),
    ("sensitivity", [DROUGHT], "exactlp.cli._load"),
    ("ranges", [DROUGHT], "exactlp.cli._load"),
    ("conflict", [INFEASIBLE], "exactlp.cli._load"),
    ("trace", ["run.log.jsonl"], "exactlp.audit.read_log"),
    ("import", ["src.mps", "-o", "out.yaml"], "exactlp.io.read_mps"),
]


@pytest.mark.parametrize("command, args, target", INTERNAL, ids=[c for c, _, _ in INTERNAL])
def test_every_command_turns_an_internal_error_into_one_line_unless_debugging(cli, monkeypatch, tmp_path,
                                                                            command, args, target):
    def boom(*a, **k):
        raise ZeroDivisionError("simulated")

    monkeypatch.chdir(tmp_path)
    monkeypatch.setattr(target, boom)
    code, out, err = cli(command, *args)
    assert (code, out) == (4, "")
    assert err == "exactlp: internal error: ZeroDivisionError: simulated (run again with --debug for the traceback)\n"
    code, out, err = cli(command, *args, "--debug")  # the exception itself, for its traceback
    assert code == 1 and "internal error" not in err
    assert os.listdir(tmp_path) == []


def test_json_output_is_sorted_indented_and_keeps_names_as_written(cli, write):
    path = write("débit.yaml", "name: Réservoir du Nord\nmaximize: x\nvariables: {x: {upper: 3}}\n"
                               "constraints:\n  basin: x <= 2\n")
    for args in (("solve", path, "--json"), ("sensitivity", path, "--json")):
        code, out, _ = cli(*args)
        assert code == 0 and '"name": "Réservoir du Nord"' in out
        assert out == json.dumps(json.loads(out), sort_keys=True, indent=2, ensure_ascii=False) + "\n"


def test_a_command_leaves_the_signal_handlers_as_it_found_them(cli):
    # each command handles SIGTERM (and solve SIGINT) while it runs; a script that
    # calls the command line in its own process gets its own handlers back
    def mine(signum, frame):  # (a handler of the caller's own, so that none left behind passes for it)
        pass

    saved = {s: signal.signal(s, mine) for s in (signal.SIGTERM, signal.SIGINT)}
    try:
        for args in (("check", DROUGHT), ("solve", DROUGHT), ("check", "no such file.yaml")):
            cli(*args)
            assert (signal.getsignal(signal.SIGTERM), signal.getsignal(signal.SIGINT)) == (mine, mine)
    finally:
        for s, h in saved.items():
            signal.signal(s, h)


def test_a_bad_model_says_what_is_wrong_with_it_not_that_it_is_a_certificate(cli, write):
    # a model file that fails to load is tried as a certificate, to tell two swapped
    # arguments apart; a model with a mistake is still a model, and its own error is said
    path = write("typo.yaml", "minimise: x\nvariables: {x: {upper: 3}}\n")
    for args in (("check", path), ("verify", path, path)):
        code, out, err = cli(*args)
        assert (code, out) == (2, "")
        assert err == f"exactlp: {path}:1:1: minimise: unknown key 'minimise' (did you mean 'minimize'?)\n"


@pytest.mark.parametrize("command, option, instead", [
    ("solve", "-o", "the certificate is written with -c/--certificate, the log with -l/--log"),
    ("solve", "--output", "the certificate is written with -c/--certificate, the log with -l/--log"),
    ("sensitivity", "-c", "the report is written with -o/--output"),
    ("ranges", "--certificate", "the report is written with -o/--output"),
    ("conflict", "-c", "the report is written with -o/--output"),
])
def test_an_output_option_of_another_command_names_this_ones(cli, tmp_path, command, option, instead):
    # solve writes a certificate (-c) and the analyses a report (-o): the other's
    # option is refused with the one this command has, and nothing is written
    out_file = tmp_path / "out.yaml"
    code, out, err = cli(command, DROUGHT, option, out_file)
    assert (code, out) == (2, "")
    # (the middle is the command-line library's wording, which its versions change)
    assert err.startswith(f"exactlp: {command}: ") and option in err and err.count("\n") == 1
    assert err.endswith(f"; {instead} (see 'exactlp {command} -h')\n")
    assert not out_file.exists()


def test_verify_with_its_arguments_swapped_or_doubled_says_so(cli, tmp_path):
    cert = tmp_path / "c.yaml"
    assert cli("solve", DROUGHT, "-c", cert)[0] == 0
    code, out, err = cli("verify", cert, DROUGHT)
    assert (code, out) == (2, "")
    assert err == (f"exactlp: {cert}: this is a certificate or report, not a model: "
                   "the model comes first, exactlp verify MODEL CERTIFICATE\n")
    code, out, err = cli("verify", DROUGHT, DROUGHT)
    assert (code, out) == (2, "")
    assert err == f"exactlp: {DROUGHT}: this is a model file, not a certificate: exactlp verify MODEL CERTIFICATE\n"


def _wide_model(write, n: int) -> str:
    lines = ["name: wide", "maximize: " + " + ".join(f"x{i}" for i in range(n)), "variables:"]
    lines += [f"  x{i}: {{upper: {i % 7 + 1}}}" for i in range(n)]
    lines += ["constraints:", "  cap: " + " + ".join(f"x{i}" for i in range(n)) + f" <= {2 * n}"]
    return write("wide.yaml", "\n".join(lines) + "\n")


def test_screen_tables_show_at_most_rows_and_say_how_many_more(cli, write):
    from exactlp import render
    from exactlp.cli import SCREEN_ROWS

    assert render.ROWS == SCREEN_ROWS == 200
    model = _wide_model(write, 250)

    def variable_rows(out):  # the first column of the first table's rows
        lines = out.splitlines()
        start = next(i for i, line in enumerate(lines) if line.strip().startswith("variable "))
        rows = []
        for line in lines[start + 2:]:
            if not line.strip():
                break
            rows.append(line.split()[0])
        return rows

    code, out, _ = cli("solve", model)
    assert code == 0 and variable_rows(out) == [f"x{i}" for i in range(200)]
    assert ("... and 50 more variables, not shown here (the certificate and --json hold every value; "
            "--rows 0 shows every one)") in out
    code, out, _ = cli("solve", model, "--rows", "0")
    assert code == 0 and variable_rows(out) == [f"x{i}" for i in range(250)] and "more variables" not in out
    code, out, _ = cli("solve", model, "--rows", "3")
    assert variable_rows(out) == ["x0", "x1", "x2"] and "... and 247 more variables" in out
    code, out, _ = cli("solve", model, "--json", "--rows", "3")
    assert code == 0 and len(json.loads(out)["primal"]) == 250  # --json is never cut
    code, out, _ = cli("show", model, "--rows", "4")
    assert variable_rows(out) == ["x0", "x1", "x2", "x3"]
    assert "... and 246 more variables, not shown here (the model file holds them; --rows 0 shows every one)" in out
    code, out, _ = cli("ranges", model, "--rows", "2")
    assert variable_rows(out) == ["x0", "x1"] and "... and 248 more variables" in out
    code, out, _ = cli("sensitivity", model, "--rows", "2")
    assert code == 0 and variable_rows(out) == ["x0", "x1"] and "... and 248 more variables" in out
    log = str(Path(model).with_suffix(".log.jsonl"))
    assert cli("solve", model, "--no-warm-start", "-l", log)[0] == 0
    steps = sum(1 for line in open(log) if '"record": "pivot"' in line)
    assert steps > 1
    code, out, _ = cli("trace", log, "--rows", "1")
    assert code == 0 and (f"... and {steps - 1:,} more pivots, not shown here (the log holds every one, and "
                          "--pivot K shows any one; --rows 0 shows every one)") in out


# A model of every shape the screens render: a negative first term and constant,
# a fraction, a fixed, a free and a two-sided variable, an equality, a ranged and
# a '>=' row, no name (the file's path stands for it); the optimum by hand: w = x - 1
# makes the objective 2 y - 9/2, least at y = -2 (-17/2), x anywhere in [0, 4]
SHAPES = """minimize: -x + 2 y - 1/2 z + w - 3
variables:
  x: {upper: 4}
  y: {lower: -2, upper: 5}
  z: {fixed: 1}
  w: {lower: -inf}
  v: {lower: -inf}
constraints:
  e1: w - x == -1
  r1: 1 <= -y + w <= 10
  g1: y + 2 v >= -6
"""

SHAPES_SCREENS = {
    "show": """\
Model: {path}
Objective: minimize -x + 2 y - 1/2 z + w - 3
Variables

  variable   lower   upper   unit   note
 ────────────────────────────────────────
  x              0       4
  y             -2       5
  z              1       1
  w           -inf     inf
  v           -inf     inf

Constraints

  constraint   rule
 ────────────────────────────────
  e1           -x + w == -1
  r1           1 <= -y + w <= 10
  g1           y + 2 v >= -6

""",
    "solve": """\
model      {path}  ({fp19}…)
outcome    optimal: proven by primal and dual feasibility with a zero gap
objective  -17/2
           ≈ -8.5  (decimal rendering to 12 digits)
pivots     phase 1: 1, phase 2: 0, bound flips: 0
check      the certificate passed the independent verifier
audit log  {log}
Variables

  variable   value   lower   upper   reduced cost   position
 ─────────────────────────────────────────────────────────────
  x              1       0       4              0   basic
  y             -2      -2       5              2   at lower
  z              1       1       1           -1/2   fixed
  w              0    -inf     inf              0   free at 0
  v              0    -inf     inf              0   free at 0

Constraints

  constraint   activity   lower   upper   dual   state
 ────────────────────────────────────────────────────────
  e1                 -1      -1      -1      1   binding
  r1                  2       1      10      0   slack
  g1                 -2      -6     inf      0   slack

Caution: this is the proven outcome of the model as written, not proof that the model states the agreed rules; decisions under legal or regulatory rules need qualified review.
""",
    "trace": """\
log       exactlp {version}, exactlp-log/1
model     (unnamed)  {fp}
settings  iteration_limit=null, pricing=guarded, tableau=true, time_limit=null, warm_start=auto
Pivots

  #   phase   entering   leaving       ratio   step   objective   rule
 ───────────────────────────────────────────────────────────────────────
  1       1   x ↑        e1 -> lower       1      1           0   devex

closed: optimal, objective -17/2, pivots 1 + 0, bound flips 0
""",
    "pivot": """\
log       exactlp {version}, exactlp-log/1
model     (unnamed)  {fp}
settings  iteration_limit=null, pricing=guarded, tableau=true, time_limit=null, warm_start=auto
Pivot 1
degenerate     False
direction      increase
entering       x (variable)
iteration      1
leaving        e1 (artificial)
leaving_bound  lower
objective      0
phase          1
ratio          1
reduced_cost   -1
rule           devex
step           1
Tableau before the pivot (rows: basic columns; B^-1 A)

  basic          value    x    y   z    w    v   e1'   r1'   g1'   e1*
 ──────────────────────────────────────────────────────────────────────
  e1*                1    1    0   0   -1    0     1     0     0     1
  r1'                2    0    1   0   -1    0     0     1     0     0
  g1'               -2    0   -1   0    0   -2     0     0     1     0
  reduced cost           -1    0        1    0

(' marks a constraint's slack column, * an artificial one)
closed: optimal, objective -17/2, pivots 1 + 0, bound flips 0
""",
}


def test_the_screens_of_a_model_of_every_shape(cli, write, tmp_path):
    # each screen whole, line for line, at the pinned width without colour: the
    # model as tables, the solve with its positions and states, the log's pivots,
    # and one pivot with its tableau (a slack column marked ', an artificial *)
    path, log = write("shapes.yaml", SHAPES), tmp_path / "shapes.log.jsonl"
    m = exactlp.load(path)
    fill = dict(path=path, log=log, fp=m.fingerprint, fp19=m.fingerprint[:19], version=exactlp.__version__)
    code, out, _ = cli("check", path)  # (x2 free: w and v; z fixed; e1 an equality, r1 ranged)
    assert code == 0 and lines(out)[1:5] == ["name         (none)", "objective    minimize, 4 terms",
                                            "variables    5 (2 free, 1 fixed)",
                                            "constraints  3 (1 equality, 1 ranged)"]
    for name, args in (("show", ("show", path)), ("solve", ("solve", path, "--tableau", "-l", log)),
                       ("trace", ("trace", log)), ("pivot", ("trace", log, "--pivot", "1"))):
        code, out, err = cli(*args)
        assert (code, err) == (0, "")
        assert lines(out) == SHAPES_SCREENS[name].format(**fill).splitlines(), name


@pytest.mark.parametrize("text, objective, rule", [
    # (the objective and the one row as the screens write them; terms in the
    # order the variables are declared)
    ("minimize: x + 2\nvariables: {x: {}, x2: {}}\nconstraints:\n  r: x <= 1\n", "minimize x + 2", "x <= 1"),
    ("minimize: 5\nvariables: {x: {}, x2: {}}\nconstraints:\n  r: -x >= -1\n", "minimize 5", "-x >= -1"),
    ("maximize: -3\nvariables: {x: {}, x2: {}}\nconstraints:\n  r: x2 - 2 x == 0\n", "maximize -3",
     "-2 x + x2 == 0"),
    ("maximize: 0\nvariables: {x: {}, x2: {}}\nconstraints:\n  r: -1/2 <= 3/4 x - x2 <= 0\n", "maximize 0",
     "-1/2 <= 3/4 x - x2 <= 0"),
    ("minimize: -x - 1/3\nvariables: {x: {upper: 1}, x2: {}}\nconstraints:\n  r: x2 - x >= 1\n",
     "minimize -x - 1/3", "-x + x2 >= 1"),
    # (positive fractions below 1 after the first term, and a constant alone)
    ("minimize: x + 1/3\nvariables: {x: {}, x2: {}}\nconstraints:\n  r: x + 1/2 x2 <= 1\n",
     "minimize x + 1/3", "x + 1/2 x2 <= 1"),
    ("maximize: 2/3\nvariables: {x: {}, x2: {}}\nconstraints:\n  r: x >= 0\n", "maximize 2/3", "x >= 0"),
])
def test_objectives_and_rules_as_the_screens_write_them(text, objective, rule):
    from exactlp.io import model_from_text
    from exactlp.render import objective_text, row_formula

    m = model_from_text(text)
    assert (objective_text(m), row_formula(m.constraints[0])) == (objective, rule)


def test_the_sensitivity_screen_says_which_way_each_dual_moves_the_objective(cli):
    # emissions: zone_cap's dual -44/1000 = -11/250 (one more kt of cap saves plant
    # b's abatement, see test_cases), min_share_d's 1/125 (plant d's 0.052 over b's 0.044)
    code, out, _ = cli("sensitivity", CASES / "emissions.yaml")
    said = [line for line in lines(out) if line.startswith("Raising the ")]
    assert code == 0 and said == [
        "Raising the zone_cap limit by 1 lowers the objective by 11/250, valid while the limit stays within "
        "[-1113/5, -140].",
        "Raising the min_share_d limit by 1 raises the objective by 1/125, valid while the limit stays within "
        "[0, 213/5]."]


def test_the_solve_screens_of_the_other_outcomes_in_full(cli, write):
    # a crossed pair of bounds names itself as the proof; an unbounded model shows
    # its feasible point and the ray, 0 where the ray does not move; a model with
    # abs() shows each function's value at the optimum (shares_historic's, as the
    # verified solve gives them; their sum is the objective, 90)
    code, out, _ = cli("solve", write("crossed.yaml", "maximize: x\nvariables: {x: {lower: 3, upper: 2}}\n"))
    assert code == 0 and lines(out)[1] == "outcome  infeasible: proven by a pair of sides that cross"
    assert "The variable 'x' has a lower bound above its upper bound." in lines(out)
    code, out, _ = cli("solve", UNBOUNDED)
    assert code == 0 and [x.split() for x in lines(out) if x.startswith(("  seg", "  swap "))] == [
        ["seg1", "[kcm/d]", "120", "0", "120", "0"], ["seg2", "[kcm/d]", "60", "0", "90", "0"],
        ["swap", "[kcm/d]", "0", "0", "inf", "1"]]
    code, out, _ = cli("solve", CASES / "shares_historic.yaml")
    table = [x.split() for x in lines(out)]
    assert code == 0 and "In the model's own terms (each function's exact value at the optimum):" in lines(out)
    assert [r for r in table if r[:1] == ["objective"] and r[1].startswith("abs(")] == [
        ["objective", "abs(p1", "-", "120)", "45"], ["objective", "abs(p2", "-", "260)", "30"],
        ["objective", "abs(p3", "-", "180)", "0"], ["objective", "abs(p4", "-", "200)", "15"],
        ["objective", "abs(p5", "-", "140)", "0"]]


def test_the_sensitivity_screen_of_the_model_of_every_shape(cli, write):
    # each objective coefficient's range: v, free and without cost, must keep a
    # cost of 0; the fixed z may take any cost; y's may fall to 0 before y leaves
    # its lower bound; x's and w's cannot move at all, since e1 ties them (w = x - 1)
    # and a change to either gives the free w a nonzero reduced cost
    code, out, _ = cli("sensitivity", write("shapes.yaml", SHAPES))
    assert code == 0 and [line.split() for line in lines(out)[5:10]] == [
        ["x", "-1", "[-1,", "-1]"], ["y", "2", "[0,", "inf]"], ["z", "-1/2", "[-inf,", "inf]"],
        ["w", "1", "[1,", "1]"], ["v", "0", "[0,", "0]"]]
