"""The command line: a thin layer over the library.

Exit codes, the same for every command:

* 0  solved with a certificate (optimal, infeasible or unbounded), or a
     command that succeeded (check, show, trace, import, a valid verify)
* 1  verification failed: the certificate does not prove its claim
* 2  bad input or usage (one line naming file, line, column and field)
* 3  a limit (iterations, time) was reached: nothing is proven
* 4  internal error (a short message; ``--debug`` shows the traceback)
* 130 / 143  interrupted by SIGINT / SIGTERM (one line; no file left half-written)
* 141  the program reading the output closed it (``exactlp ... | head``)
"""

from __future__ import annotations

import contextlib
import json
import os
import signal
import sys
from typing import Optional

import typer
import typer.core

from . import __version__

# (0 and 2 come from where they are decided: a command that returns, and the
# library's errors' own ``exit_code``, 2 for bad input; see exactlp.errors)
EXIT_INVALID, EXIT_LIMIT, EXIT_INTERNAL = 1, 3, 4
EXIT_PIPE = 141  # the reader of our output went away (128 + SIGPIPE)


class _OneLineErrors(typer.core.TyperGroup):
    """Usage errors (a missing argument, an unknown option, a bad option value)
    as one line on stderr, exit status 2, like every other bad input."""

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        if not standalone_mode:
            return super().main(args, prog_name, complete_var, standalone_mode, **extra)
        # (click's base exception, whether typer vendors click or depends on it)
        click_exception = next(c for c in typer.BadParameter.__mro__ if c.__name__ == "ClickException")
        try:
            code = super().main(args, prog_name, complete_var, False, **extra)
        except click_exception as e:
            if type(e).__name__ == "NoArgsIsHelpError":  # a bare `exactlp`: its help, as before
                return super().main(args, prog_name, complete_var, True, **extra)
            sys.stderr.write(_usage_line(e) + "\n")
            sys.stderr.flush()
            sys.exit(e.exit_code)
        except typer.Abort:  # (only a prompt raises it, and exactlp has none: as an interrupt)
            sys.stderr.write("exactlp: aborted\n")
            sys.stderr.flush()
            sys.exit(130)
        sys.exit(code if isinstance(code, int) else 0)


#: an output option given to the command that names its output otherwise: the
#: option it has instead (``solve`` writes a certificate and a log, the analyses
#: a report)
_OUTPUT_INSTEAD = {
    **{("solve", o): "the certificate is written with -c/--certificate, the log with -l/--log"
       for o in ("-o", "--output")},
    **{(c, o): "the report is written with -o/--output"
       for c in ("sensitivity", "ranges", "conflict") for o in ("-c", "--certificate")},
}


def _usage_line(e) -> str:
    """``exactlp: solve: Missing argument 'MODEL'. (see 'exactlp solve -h')``: the
    command, the command-line library's own words on one line, and where help is."""
    ctx = getattr(e, "ctx", None)
    text = " ".join(e.format_message().split())
    instead = _OUTPUT_INSTEAD.get((getattr(ctx, "info_name", None), getattr(e, "option_name", None)))
    if instead is not None and type(e).__name__ == "NoSuchOption":
        text = f"{text.rstrip('.')}; {instead}"
    where = ""
    helper = "exactlp -h"
    if ctx is not None and ctx.command_path and ctx.command_path != ctx.find_root().info_name:
        where = ctx.command_path.split(" ", 1)[-1] + ": "
        helper = f"{ctx.command_path} -h"
    return f"exactlp: {where}{text} (see '{helper}')"


app = typer.Typer(
    name="exactlp",
    cls=_OneLineErrors,
    help="Exact linear programming with proofs: solve a model in rational arithmetic, "
    "write an audit log and a certificate, and let anyone re-check it.",
    no_args_is_help=True,
    add_completion=True,
    pretty_exceptions_enable=False,
    # plain help, as the command-line library writes it: rich's markup would
    # eat bracketed text ('exactlp[fast]'), and its help layout costs about
    # 80 ms of start-up (the --help target is 0.3 s)
    rich_markup_mode=None,
    context_settings={"help_option_names": ["-h", "--help"]},
)


def _version(value: bool) -> None:
    if value:
        typer.echo(f"exactlp {__version__}")
        raise typer.Exit(0)


@app.callback()
def _root(
    version: bool = typer.Option(False, "--version", callback=_version, is_eager=True, help="Print the version and exit."),
) -> None:
    pass


def _console(stderr: bool = False):
    from rich.console import Console

    console = Console(stderr=stderr, highlight=False, soft_wrap=False, emoji=False)
    console.on_broken_pipe = _reader_gone  # (rich's own would exit 1: ours means "invalid")
    return console


@contextlib.contextmanager
def _progress(as_json: bool):
    """A live one-line status on stderr for the analysis commands, on terminals
    only (their exact solves and report checks can run for minutes on large
    models); yields the function that updates it, which does nothing elsewhere."""
    err = _console(stderr=True)
    if as_json or not err.is_terminal:
        yield lambda text: None
        return
    with err.status("working…") as status:
        yield lambda text: status.update(text)


def _reader_gone() -> None:
    """The program reading our output has closed it (``exactlp ... | head``): stop
    quietly with exit status 141, as a process killed by SIGPIPE would.  Files
    already written (a certificate, a log) are complete; nothing else is."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())  # (so that the final flush cannot fail again)
    except (OSError, ValueError):
        pass
    raise SystemExit(EXIT_PIPE)


def _dumps(doc) -> str:
    """The one JSON spelling of every --json document: sorted keys, exact numbers as strings."""
    return json.dumps(doc, sort_keys=True, indent=2, ensure_ascii=False)


def _fail(message: str, code: int) -> "typer.Exit":
    sys.stderr.write(f"exactlp: {message}\n")
    sys.stderr.flush()
    return typer.Exit(code)


class _Terminated(BaseException):
    """SIGTERM, raised where the command is, so that every ``finally`` and every
    atomic write's clean-up runs (no temporary file is left behind)."""


def _on_term(signum, frame):
    raise _Terminated()


class _Run:
    """Run a command body, turning every library exception into one message.

    An interrupt (SIGINT) or a termination (SIGTERM) ends it with one line and
    status 130 or 143; ``solve`` handles both itself while it solves (it closes
    its log), and this covers the rest of every command."""

    def __init__(self, debug: bool = False) -> None:
        self.debug = debug
        self._old_term = None

    def __enter__(self):
        try:
            self._old_term = signal.signal(signal.SIGTERM, _on_term)
        except ValueError:  # (not the main thread: signals stay as they are)
            self._old_term = None
        return self

    def __exit__(self, etype, exc, tb):
        if self._old_term is not None:
            signal.signal(signal.SIGTERM, self._old_term)
        if isinstance(exc, KeyboardInterrupt):
            raise _fail("interrupted; no file is left half-written", 130) from None
        if isinstance(exc, _Terminated):
            raise _fail("terminated; no file is left half-written", 143) from None
        if exc is None or isinstance(exc, (typer.Exit, SystemExit)):
            return False
        if isinstance(exc, BrokenPipeError):
            _reader_gone()
        from .errors import ExactLPError

        if isinstance(exc, ExactLPError):
            raise _fail(str(exc), exc.exit_code) from None
        if self.debug:
            return False
        raise _fail(
            f"internal error: {type(exc).__name__}: {exc} (run again with --debug for the traceback)",
            EXIT_INTERNAL,
        ) from None


SCREEN_ROWS = 200  # (render.ROWS: a test keeps the two the same; render is not imported for --help)


def _rows_option():
    return typer.Option(SCREEN_ROWS, "--rows", min=0, metavar="N",
                        help="Most rows of each table on the screen (0: every row); files and --json are never cut.")


def _load(path: str):
    from .io import load

    return load(path)


def _load_model_not_certificate(path: str):
    """Load a model; if the file is a certificate or report instead (the two
    arguments swapped), say so rather than list its unknown keys."""
    from .errors import InputError

    try:
        return _load(path)
    except InputError as first:
        try:
            from .certificate import read_certificate

            doc = read_certificate(path)
        except Exception:
            raise first from None
        if isinstance(doc, dict) and ("format" in doc or "report" in doc):
            raise InputError("this is a certificate or report, not a model: the model comes first, "
                             "exactlp verify MODEL CERTIFICATE", file=path) from None
        raise


# ----------------------------------------------------------------------
@app.command()
def check(
    model: str = typer.Argument(..., metavar="MODEL", help="Model file (.yaml, .mps or .mps.gz)."),
    debug: bool = typer.Option(False, "--debug", help="Show tracebacks of internal errors."),
) -> None:
    """Validate a model and print its summary and fingerprint.

    Example:  exactlp check cases/drought.yaml
    """
    with _Run(debug):
        m = _load(model)
        from .render import summary

        summary(_console(), m, model)


@app.command()
def show(
    model: str = typer.Argument(..., metavar="MODEL", help="Model file (.yaml, .mps or .mps.gz)."),
    expanded: bool = typer.Option(False, "--expanded", help="Show the linear program actually solved (abs/max/min reformulated)."),
    rows: int = _rows_option(),
    debug: bool = typer.Option(False, "--debug", help="Show tracebacks of internal errors."),
) -> None:
    """Print the model as tables: objective, variables with bounds, constraints as formulas.

    Example:  exactlp show cases/drought.yaml
    """
    with _Run(debug):
        m = _load(model)
        from .render import show_model

        show_model(_console(), m, expanded, rows)


@app.command("import")
def import_(
    source: str = typer.Argument(..., metavar="SRC.mps", help="MPS file (.mps or .mps.gz), free or fixed format."),
    output: str = typer.Option(..., "-o", "--output", metavar="OUT.yaml", help="Where to write the model in the exactlp YAML format."),
    debug: bool = typer.Option(False, "--debug", help="Show tracebacks of internal errors."),
) -> None:
    """Convert an MPS file into an exactlp YAML model (same fingerprint).

    Example:  exactlp import afiro.mps.gz -o afiro.yaml
    """
    with _Run(debug):
        from .io import dump_yaml_model, model_from_text, read_mps
        from .io.atomic import write_atomic

        _check_output(output, None)  # (the source itself is refused by write_atomic)
        m = read_mps(source)
        text = dump_yaml_model(m)
        again = model_from_text(text, output)
        if again.fingerprint != m.fingerprint:  # pragma: no cover - a writer bug
            raise RuntimeError("the written YAML does not reproduce the model")
        write_atomic(output, text, protect=(source,))
        from rich.text import Text

        _console().print(Text(f"wrote {output}: {len(m.variables)} variables, {len(m.constraints)} "
                              f"constraints, {m.fingerprint}"), soft_wrap=True)


def _result_json(model, result, cert, cert_path, log_path, digits):
    from .numbers import format_decimal

    doc = {
        "tool": f"exactlp {__version__}",
        "model": {"name": model.name, "fingerprint": model.fingerprint},
        "status": result.status.value,
        "proven": result.status.is_proven,
        "pivots": {"phase1": result.pivots_phase1, "phase2": result.pivots_phase2, "bound_flips": result.bound_flips},
        "certificate": cert_path,
        "log": log_path,
    }
    if cert is not None:
        for k in ("objective", "primal", "activities", "duals", "reduced_costs", "farkas", "crossed_bounds",
                  "ray", "ray_objective", "notice"):
            if k in cert:
                doc[k] = cert[k]
        doc["verified"] = True
    if result.objective is not None:
        doc["objective_decimal"] = format_decimal(result.objective, digits)
    return _dumps(doc)


@app.command()
def solve(
    model: str = typer.Argument(..., metavar="MODEL", help="Model file (.yaml, .mps or .mps.gz)."),
    certificate: Optional[str] = typer.Option(None, "-c", "--certificate", metavar="CERT", help="Write the certificate here."),
    log: Optional[str] = typer.Option(None, "-l", "--log", metavar="LOG", help="Write the pivot-by-pivot audit log here (JSON Lines)."),
    pricing: str = typer.Option("guarded", "--pricing", metavar="RULE", help="Pricing rule: guarded (default), hybrid, bland or dantzig."),
    warm_start: Optional[bool] = typer.Option(
        None, "--warm-start/--no-warm-start",
        help="Start from a basis suggested by a floating-point solver (exactlp[fast] extra); "
             "re-proven exactly. Default: on for models with 50 rows or more when highspy is installed."),
    iteration_limit: Optional[int] = typer.Option(None, "--iteration-limit", min=0, metavar="N", help="Stop after this many steps (nothing is proven then)."),
    time_limit: Optional[float] = typer.Option(None, "--time-limit", min=0, metavar="S", help="Stop after this many seconds (nothing is proven then)."),
    tableau: bool = typer.Option(False, "--tableau", help="Record the full exact tableau at each pivot in the log (small models)."),
    as_json: bool = typer.Option(False, "--json", help="Print one JSON document on stdout instead of tables."),
    cert_format: str = typer.Option("yaml", "--certificate-format", metavar="yaml|json", help="yaml (default) or json."),
    digits: int = typer.Option(12, "--digits", min=1, max=100, metavar="N", help="Significant digits of the decimal rendering."),
    timestamps: bool = typer.Option(False, "--timestamps", help="Add wall-clock times to the log's header and closing record."),
    rows: int = _rows_option(),
    debug: bool = typer.Option(False, "--debug", help="Show tracebacks of internal errors."),
) -> None:
    """Solve a model exactly, verify the proof, and report.

    \b
    Examples:
      exactlp solve cases/drought.yaml
      exactlp solve cases/drought.yaml -c drought.cert.yaml -l drought.log.jsonl
    """
    with _Run(debug):
        from .errors import InputError, OutputError
        from .io.atomic import same_file

        if cert_format not in ("yaml", "json"):
            raise InputError(f"must be yaml or json, not '{cert_format}'", field="--certificate-format")
        m = _load(model)
        for out in (certificate, log):
            _check_output(out, model)
        if certificate is not None and log is not None and same_file(certificate, log):
            raise OutputError(f"{log}: the certificate and the log cannot be the same file")
        _solve_command(m, model, certificate, log, pricing, iteration_limit, time_limit, tableau,
                       as_json, cert_format, digits, timestamps, warm_start, rows)


def _check_output(out: str | None, source: str | None) -> None:
    """Refuse an output path before any work is done: the input file itself,
    a folder that does not exist, or a folder in place of a file."""
    from .errors import OutputError
    from .io.atomic import same_file

    if out is None:
        return
    if source is not None and same_file(out, source):
        raise OutputError(f"{out}: refusing to write over the model file")
    if not os.path.isdir(os.path.dirname(os.path.abspath(out))):
        raise OutputError(f"{out}: the folder does not exist")
    if os.path.isdir(out):
        raise OutputError(f"{out}: is a folder; give a file name")


def _warm_note(m, warm_start, result) -> str | None:
    """The screen's word on a warm start left off only because the float extra is
    missing (on a model it would have been used for); None otherwise.  Only the
    screen says it: the result, the log and the certificate are those of any cold solve."""
    if warm_start is not None or result.warm_start != "off" or m.stages:
        return None
    from .floatlp import WARM_START_MIN_ROWS, highs_available

    if len(m.constraints) < WARM_START_MIN_ROWS or highs_available():
        return None
    return (f"off: the exactlp[fast] extra is not installed; with it, models of {WARM_START_MIN_ROWS} rows "
            f"or more start from a basis a floating-point solver suggests, re-proven exactly")


def _solve_command(m, model_path, certificate, log, pricing, iteration_limit, time_limit, tableau,
                   as_json, cert_format, digits, timestamps, warm_start=None, rows=SCREEN_ROWS):
    from .audit import AuditLog
    from .certificate import build_certificate, dump_certificate
    from .io.atomic import write_atomic
    from .solver import solve as run_solve
    from .solver.result import Status
    from .verifier import verify

    stop = {"signal": None}

    def on_signal(signum, frame):
        stop["signal"] = signum

    old = {s: signal.signal(s, on_signal) for s in (signal.SIGINT, signal.SIGTERM)}
    listeners = []
    log_fh = None
    partial = None
    try:
        if log is not None:
            partial = log + ".partial"
            log_fh = open(partial, "w", encoding="utf-8", newline="\n")
            settings = {"pricing": pricing, "iteration_limit": iteration_limit,
                        "time_limit": None if time_limit is None else str(time_limit), "tableau": tableau,
                        "warm_start": "auto" if warm_start is None else ("on" if warm_start else "off")}
            listeners.append(AuditLog(log_fh, m, settings, timestamps=timestamps))
        status_line = None
        err_console = _console(stderr=True)
        if not as_json and err_console.is_terminal:
            from .render import StatusLine

            status_line = StatusLine(err_console)
            listeners.append(status_line)

        def listener(ev):
            for f in listeners:
                f(ev)

        opts = dict(pricing=pricing, iteration_limit=iteration_limit, time_limit=time_limit,
                    listener=listener if listeners else None, tableau=tableau,
                    should_stop=lambda: stop["signal"] is not None, warm_start=warm_start)

        def run():
            if m.stages:
                from .stages import solve_stages

                staged_box.append(solve_stages(m, **opts))
                return staged_box[-1].final
            return run_solve(m, **opts)

        staged_box: list = []

        if status_line is not None:
            with status_line:
                result = run()
        else:
            result = run()
        if log_fh is not None:
            log_fh.flush()
            os.fsync(log_fh.fileno())
            log_fh.close()
            log_fh = None
            os.replace(partial, log)
    finally:
        if log_fh is not None:
            log_fh.close()
        for s, h in old.items():
            signal.signal(s, h)

    if result.status is Status.INTERRUPTED:
        code = 130 if stop["signal"] == signal.SIGINT else 143
        raise _fail("interrupted: no certificate written" + (f"; the log is {log}" if log else ""), code)

    cert = None
    verified = None
    shown = m
    if staged_box:
        from .stages import staged_certificate

        shown = staged_box[-1].stages[-1][1]  # the last stage's own linear program
    if result.status.is_proven:
        cert = staged_certificate(m, staged_box[-1]) if staged_box else build_certificate(m, result)
        check = verify(m, cert)
        verified = check.valid
        if not check.valid:  # the solver produced a proof the verifier rejects: our bug
            raise RuntimeError(f"the certificate failed verification: {check.failure.detail}")
        if certificate is not None:
            write_atomic(certificate, dump_certificate(cert, cert_format), protect=(model_path,))
    # (a tiered model's values are its last tier's, on the screen and in --json:
    # that tier's own program, the earlier optima held by its '.held' rows)
    last = cert["stages"][-1]["certificate"] if staged_box and cert is not None else cert
    if as_json:
        doc = json.loads(_result_json(shown, result, last, certificate, log, digits))
        doc["model"] = {"name": m.name, "fingerprint": m.fingerprint}
        if staged_box:
            from .numbers import format_number

            doc["stages"] = [{"name": n, "status": r.status.value,
                              "objective": None if r.objective is None else format_number(r.objective)}
                             for n, _, r in staged_box[-1].stages]
        typer.echo(_dumps(doc))
    else:
        from .render import solve_report, stages_report

        if staged_box:
            stages_report(_console(), m, staged_box[-1])
        solve_report(_console(), shown, result, digits=digits, certificate=certificate if cert else None,
                     verified=verified, log=log, cert=last, rows=rows,
                     warm_note=_warm_note(m, warm_start, result), named=m)
    if not result.status.is_proven:
        raise typer.Exit(EXIT_LIMIT)


@app.command()
def verify(
    model: str = typer.Argument(..., metavar="MODEL", help="Model file the certificate is about."),
    certificate: str = typer.Argument(..., metavar="CERT", help="Certificate file (YAML or JSON)."),
    as_json: bool = typer.Option(False, "--json", help="Print one JSON document on stdout."),
    debug: bool = typer.Option(False, "--debug", help="Show tracebacks of internal errors."),
) -> None:
    """Re-check a certificate (or a conflict or ranges report) against a model, exactly.

    Exit status 0 valid, 1 invalid, 2 unusable input.

    Example:  exactlp verify cases/drought.yaml drought.cert.yaml
    """
    with _Run(debug):
        from .certificate import read_certificate
        from .errors import InputError
        from .verifier import verify as run_verify

        m = _load_model_not_certificate(model)
        cert = read_certificate(certificate)
        if "format" not in cert and "report" not in cert and "variables" in cert:
            raise InputError("this is a model file, not a certificate: exactlp verify MODEL CERTIFICATE",
                             file=certificate)
        if "report" in cert:
            from .report_check import check_report

            v = check_report(m, cert)
        else:
            v = run_verify(m, cert)
        if as_json:
            typer.echo(_dumps({
                "valid": v.valid, "status": v.status,
                "checks": [{"name": c.name, "ok": c.ok, "detail": c.detail} for c in v.checks],
            }))
        else:
            from .render import verify_report

            verify_report(_console(), v, model, certificate)
        if not v.valid:
            raise typer.Exit(EXIT_INVALID)


@app.command()
def trace(
    log: str = typer.Argument(..., metavar="LOG", help="Audit log written by 'exactlp solve -l'."),
    pivot: Optional[int] = typer.Option(None, "--pivot", min=1, metavar="K", help="Show this one pivot in detail (with its tableau if recorded)."),
    rows: int = _rows_option(),
    debug: bool = typer.Option(False, "--debug", help="Show tracebacks of internal errors."),
) -> None:
    """Replay an audit log on screen: a table of pivots, or one pivot in detail.

    Example:  exactlp trace drought.log.jsonl --pivot 2
    """
    with _Run(debug):
        from .audit import read_log
        from .render import trace_report

        trace_report(_console(), read_log(log), pivot, rows)


def _write_report(model_path: str, m, doc: dict, output: str, say=lambda text: None) -> None:
    """Check a report as a reviewer would, then write it atomically."""
    from .certificate import dump_certificate, dump_yaml_to
    from .io.atomic import write_atomic
    from .report_check import check_report

    say(f"checking the report as a reviewer would, then writing {output}")
    v = check_report(m, doc)
    if not v.valid:  # our own report fails its check: a bug, never written
        raise RuntimeError(f"the report failed its check: {v.failure.detail}")
    if output.endswith(".json"):
        write_atomic(output, dump_certificate(doc, "json"), protect=(model_path,))
    else:  # (written as it is made: a large report's lines are not all held at once)
        write_atomic(output, lambda fh: dump_yaml_to(doc, fh), protect=(model_path,))


def _check_option():
    return typer.Option(True, "--check/--no-check",
                        help="Re-derive every claim with the independent report check before printing it "
                             "(always done with -o).")


def _proven(model_path: str, m, build, output: str | None, check: bool, say) -> str:
    """The proofs of an analysis: with ``-o``, the report checked and written;
    else, unless ``--no-check``, the same report built and checked in memory.
    Returns how the claims stand, for the screen's check line (render.CHECK_WORDS)."""
    from .errors import LimitError
    from .report_check import check_report

    if output is not None:
        _write_report(model_path, m, build(), output, say)
        return "checked"
    if not check:
        return "skipped"
    try:
        doc = build()
    except LimitError:  # (too many numbers to hold: the claims stand unchecked, and the screen says so)
        return "too large"
    say("checking every claim as a reviewer would")
    v = check_report(m, doc)
    if not v.valid:  # our own proofs fail their check: a bug, never printed as a result
        raise RuntimeError(f"the report failed its check: {v.failure.detail}")
    return "checked"


def _interval(iv) -> dict:
    from .numbers import format_number

    return {"lower": None if iv.lower is None else format_number(iv.lower),
            "upper": None if iv.upper is None else format_number(iv.upper)}


@app.command()
def sensitivity(
    model: str = typer.Argument(..., metavar="MODEL", help="Model file (.yaml, .mps or .mps.gz)."),
    output: Optional[str] = typer.Option(None, "-o", "--output", metavar="REPORT", help="Write a report with the proof of every claim."),
    as_json: bool = typer.Option(False, "--json", help="Print one JSON document on stdout."),
    check: bool = _check_option(),
    rows: int = _rows_option(),
    debug: bool = typer.Option(False, "--debug", help="Show tracebacks of internal errors."),
) -> None:
    """Exact ranges over which the optimal basis stays optimal (objective) or feasible (limits).

    Example:  exactlp sensitivity cases/grants.yaml
    """
    with _Run(debug):
        from .analysis import sensitivity as run_sensitivity
        from .numbers import format_number

        _check_output(output, model)
        m = _load(model)
        with _progress(as_json) as say:
            say("sensitivity: solving the model")
            s = run_sensitivity(m, progress=say)
            from .reports import sensitivity_report

            say("sensitivity: the proofs, each range with its direction")
            checked = _proven(model, m, lambda: sensitivity_report(m, s), output, check, say)
        if as_json:
            doc = {
                "model": {"name": m.name, "fingerprint": m.fingerprint},
                "check": checked,
                "objective": format_number(s.result.objective),
                "objective_ranges": {k: _interval(v) for k, v in s.objective_ranges.items()},
                "rhs_ranges": {k: dict(_interval(v.interval), dual=format_number(v.dual), bound=v.bound,
                                       value=format_number(v.value)) for k, v in s.rhs_ranges.items()},
            }
            typer.echo(_dumps(doc))
        else:
            from .render import sensitivity_report as show_sensitivity

            show_sensitivity(_console(), m, s, rows, checked)


@app.command("ranges")
def ranges_(
    model: str = typer.Argument(..., metavar="MODEL", help="Model file (.yaml, .mps or .mps.gz)."),
    variables: Optional[list[str]] = typer.Argument(None, metavar="VAR", help="Variables to range (default: all)."),
    output: Optional[str] = typer.Option(None, "-o", "--output", metavar="REPORT", help="Write a report with a certificate for every claim."),
    as_json: bool = typer.Option(False, "--json", help="Print one JSON document on stdout."),
    check: bool = _check_option(),
    rows: int = _rows_option(),
    debug: bool = typer.Option(False, "--debug", help="Show tracebacks of internal errors."),
) -> None:
    """The exact least and greatest value of each variable over all optimal allocations.

    Example:  exactlp ranges cases/grants.yaml north metro
    """
    with _Run(debug):
        from .analysis import ranges as run_ranges
        from .numbers import format_number

        _check_output(output, model)
        m = _load(model)
        with _progress(as_json) as say:
            say("ranges: solving the model")
            rg = run_ranges(m, variables or None, progress=say)
            from .reports import ranges_report

            checked = _proven(model, m, lambda: ranges_report(m, rg), output, check, say)
        if as_json:
            doc = {
                "model": {"name": m.name, "fingerprint": m.fingerprint},
                "check": checked,
                "objective": format_number(rg.result.objective),
                "unique": rg.unique,
                "proof": rg.proof,
                "ranges": {k: {"min": None if v.minimum is None else format_number(v.minimum),
                               "max": None if v.maximum is None else format_number(v.maximum),
                               "method": v.method} for k, v in rg.ranges.items()},
            }
            typer.echo(_dumps(doc))
        else:
            from .render import ranges_report as show_ranges

            show_ranges(_console(), m, rg, rows, checked)


@app.command()
def conflict(
    model: str = typer.Argument(..., metavar="MODEL", help="An infeasible model file."),
    output: Optional[str] = typer.Option(None, "-o", "--output", metavar="REPORT", help="Write a report with a certificate for every claim."),
    as_json: bool = typer.Option(False, "--json", help="Print one JSON document on stdout."),
    check: bool = _check_option(),
    rows: int = _rows_option(),
    debug: bool = typer.Option(False, "--debug", help="Show tracebacks of internal errors."),
) -> None:
    """Name a minimal set of rules that cannot all hold (each one-out subset is feasible).

    Example:  exactlp conflict cases/grants_overcommitted.yaml
    """
    with _Run(debug):
        from .analysis import conflict as run_conflict
        from .numbers import format_number

        _check_output(output, model)
        m = _load(model)
        with _progress(as_json) as say:
            say("conflict: solving the model")
            c = run_conflict(m, progress=say)
            from .reports import conflict_report

            checked = _proven(model, m, lambda: conflict_report(m, c), output, check, say)
        if as_json:
            doc = {
                "model": {"name": m.name, "fingerprint": m.fingerprint},
                "check": checked,
                "constraints": list(c.constraints),
                "bounds": list(c.bounds),
                "multipliers": {k: format_number(v) for k, v in c.result.farkas_rows.items()},
                "bound_multipliers": {k: format_number(v) for k, v in c.result.farkas_bounds.items()},
                "solves": c.solves,
            }
            if c.result.crossed is not None:
                # one item whose own sides cross: that is the proof, and there are no multipliers
                kind, name = c.result.crossed
                doc["crossed"] = {"kind": kind, "name": name}
            typer.echo(_dumps(doc))
        else:
            from .render import conflict_report as show_conflict

            show_conflict(_console(), m, c, rows, checked)


def main() -> None:  # console script entry
    app()


if __name__ == "__main__":  # pragma: no cover
    main()
