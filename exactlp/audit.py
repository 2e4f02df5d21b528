"""The audit log: one JSON object per line, written as the solve goes.

Records (key ``record``): ``header`` (tool, model fingerprint, settings),
``start`` (the starting basis), one ``pivot`` or ``flip`` per step,
``phase_end``, and one closing ``close`` record (outcome, pivots per
phase, exact objective).  Exact numbers are strings ``p/q`` or integers
written as strings, never JSON floats.  Keys are sorted and no timing is
written unless asked for (``timestamps=True`` adds wall-clock fields to the
header and the closing record only), so the same model and settings give a
byte-identical log.  Every record is flushed as it is written (one write to
the file each): a killed run leaves a log readable up to its last step.  A run
killed outright (SIGKILL) can leave its last record cut short, with no newline
after it: Linux ends a write early at a page boundary when a fatal signal is
pending.  Every line before it is whole.
"""

from __future__ import annotations

import json
import time
from fractions import Fraction
from typing import IO

from . import __version__
from .numbers import format_number
from .solver.events import Finish, PhaseEnd, Pivot, Start, WarmStart

LOG_FORMAT = "exactlp-log/1"


def plain(value):
    """Turn event values into JSON-ready values: Fractions become strings."""
    if isinstance(value, Fraction):
        return format_number(value)
    if value is None or isinstance(value, (bool, int, str)):
        return value
    if isinstance(value, dict):
        return {str(k): plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [plain(v) for v in value]
    return str(value)


def col(ref) -> dict | None:
    if ref is None:
        return None
    return {"name": ref[0], "kind": ref[1]}


def event_record(ev) -> dict:
    if isinstance(ev, WarmStart):
        return {"record": "warm_start", "source": ev.source, "float_status": ev.float_status,
                "accepted": ev.accepted, "reason": ev.reason}
    if isinstance(ev, Start):
        return {
            "record": "start",
            "phase": ev.phase,
            "artificial_rows": list(ev.artificial_rows),
            "basis": [col(r) for r in ev.basis],
            "at_upper": [col(r) for r in ev.at_upper],
            "objective": plain(ev.objective),
        }
    if isinstance(ev, Pivot):
        rec = {
            "record": "pivot" if ev.leaving is not None else "flip",
            "iteration": ev.iteration,
            "phase": ev.phase,
            "entering": col(ev.entering),
            "reduced_cost": plain(ev.reduced_cost),
            "direction": "increase" if ev.direction > 0 else "decrease",
            "leaving": col(ev.leaving) if ev.leaving is not None else "bound flip",
            "leaving_bound": ev.leaving_bound,
            "ratio": plain(ev.ratio),
            "step": plain(ev.step),
            "objective": plain(ev.objective),
            "degenerate": ev.degenerate,
            "rule": ev.rule,
        }
        if ev.tableau is not None:
            rec["tableau"] = plain(ev.tableau)
        if ev.flipped:
            rec["flipped"] = [{**col(ref), "to": bound} for ref, bound in ev.flipped]
        return rec
    if isinstance(ev, PhaseEnd):
        return {"record": "phase_end", "phase": ev.phase, "objective": plain(ev.objective), "pivots": ev.pivots}
    if isinstance(ev, Finish):
        return {
            "record": "close",
            "outcome": ev.status,
            "objective": plain(ev.objective),
            "pivots_phase1": ev.pivots_phase1,
            "pivots_phase2": ev.pivots_phase2,
            "bound_flips": ev.bound_flips,
        }
    raise TypeError(f"unknown event {ev!r}")


def dumps(record: dict) -> str:
    return json.dumps(record, sort_keys=True, ensure_ascii=False, separators=(", ", ": "))


class AuditLog:
    """A listener that writes each solver event as one line of ``stream``."""

    def __init__(self, stream: IO[str], model, settings: dict, *, timestamps: bool = False) -> None:
        self.stream = stream
        self.timestamps = timestamps
        self.started = time.monotonic()
        self.closed = False
        header = {
            "record": "header",
            "format": LOG_FORMAT,
            "tool": f"exactlp {__version__}",
            "model": {"name": model.name, "fingerprint": model.fingerprint},
            "settings": plain(settings),
        }
        if timestamps:
            header["started_at"] = time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime())
        self.write(header)

    def write(self, record: dict) -> None:
        self.stream.write(dumps(record) + "\n")
        self.stream.flush()

    def __call__(self, event) -> None:
        if isinstance(event, tuple) and event[0] == "stage":  # a priority tier begins
            self.write({"record": "stage", "index": event[1], "name": event[2]})
            return
        rec = event_record(event)
        if rec["record"] == "close":
            if self.timestamps:
                rec["seconds"] = f"{time.monotonic() - self.started:.3f}"
            self.closed = True
        self.write(rec)

    def close_interrupted(self, reason: str) -> None:
        """Write the closing record of a run that was stopped from outside."""
        if self.closed:
            return
        self(Finish(reason, None, 0, 0, 0))


def read_log(path: str) -> list[dict]:
    """Read an audit log; every line must be a JSON object (no floats allowed)."""
    from .errors import InputError

    def no_float(text):
        raise ValueError(f"a JSON float ({text}) where an exact number (a string) must be")

    records = []
    try:
        fh = open(path, encoding="utf-8")
    except OSError as exc:
        raise InputError(f"cannot read: {exc.strerror or exc}", file=path) from None
    with fh:
        for lineno, line in enumerate(fh, 1):
            if not line.strip():
                continue
            try:
                rec = json.loads(line, parse_float=no_float, parse_constant=no_float)
            except ValueError as exc:
                raise InputError(f"not a log record: {exc}", file=path, line=lineno, column=1) from None
            except RecursionError:
                raise InputError("not a log record: nesting is too deep", file=path, line=lineno, column=1) from None
            if not isinstance(rec, dict) or "record" not in rec:
                raise InputError("not a log record (no 'record' key)", file=path, line=lineno, column=1)
            records.append(rec)
    if not records or records[0].get("record") != "header":
        raise InputError("not an exactlp audit log (the first record is not a header)", file=path)
    return records
