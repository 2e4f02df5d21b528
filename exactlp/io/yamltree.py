"""A strict, safe YAML reader that keeps every scalar as its text.

PyYAML's safe loader would turn ``0.1`` into a binary float before we could
see its digits, leave ``1e3`` a string (YAML 1.1), merge duplicate keys
(last wins) and expand aliases without bound.  So we read PyYAML's *event*
stream and build our own small tree:

* every scalar stays the text written in the file (numbers are read later,
  exactly, by :mod:`exactlp.numbers`);
* every node remembers its line and column (1-based) for error messages;
* duplicate keys, tags (``!!python/object``...), anchors and aliases,
  several documents, and nesting deeper than ``Limits.max_depth`` are
  errors; the builder is a loop, not a recursion, so depth cannot exhaust
  the Python stack.
"""

from __future__ import annotations

import gzip
import os
from dataclasses import dataclass, field

import yaml

from ..errors import InputError, LimitError
from ..limits import DEFAULT_LIMITS, Limits

try:  # the C parser is much faster on large files; same events, same marks
    from yaml import CSafeLoader as _Loader
except ImportError:  # pragma: no cover - depends on how PyYAML was built
    from yaml import SafeLoader as _Loader  # type: ignore[assignment]
from yaml import (AliasEvent, DocumentStartEvent, MappingEndEvent, MappingStartEvent, ScalarEvent,
                  SequenceEndEvent, SequenceStartEvent, StreamEndEvent)


@dataclass(slots=True)
class Node:
    line: int
    column: int


@dataclass(slots=True)
class Scalar(Node):
    text: str
    #: None for a plain scalar, else the quote character or block indicator
    style: str | None = None

    @property
    def is_null(self) -> bool:
        return self.style is None and self.text in ("", "~", "null", "Null", "NULL")


@dataclass(slots=True)
class Mapping(Node):
    items: list[tuple[Scalar, Node]] = field(default_factory=list)

    def keys(self) -> list[str]:
        return [k.text for k, _ in self.items]

    def get(self, key: str) -> Node | None:
        for k, v in self.items:
            if k.text == key:
                return v
        return None

    def key_node(self, key: str) -> Scalar | None:
        for k, _ in self.items:
            if k.text == key:
                return k
        return None


@dataclass(slots=True)
class Sequence(Node):
    items: list[Node] = field(default_factory=list)


def kind_name(node: Node) -> str:
    if isinstance(node, Mapping):
        return "a mapping"
    if isinstance(node, Sequence):
        return "a list"
    return "a value"


def read_text(path: str, limits: Limits = DEFAULT_LIMITS) -> str:
    """Read a (possibly gzipped) UTF-8 text file within the size limit."""
    try:
        if path.endswith(".gz"):
            with gzip.open(path, "rb") as fh:
                data = fh.read(limits.max_file_bytes + 1)
        else:
            with open(path, "rb") as fh:
                data = fh.read(limits.max_file_bytes + 1)
    except FileNotFoundError:
        raise InputError("no such file", file=path) from None
    except IsADirectoryError:
        raise InputError("is a directory, not a file", file=path) from None
    except PermissionError:
        raise InputError("permission denied", file=path) from None
    except (OSError, EOFError, gzip.BadGzipFile) as exc:
        raise InputError(f"cannot read: {exc}", file=path) from None
    if len(data) > limits.max_file_bytes:
        raise LimitError(
            f"file is larger than the limit of {limits.max_file_bytes} bytes", file=path
        )
    return decode(data, path)


def decode(data: bytes, path: str) -> str:
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        col = exc.start - (data.rfind(b"\n", 0, exc.start) + 1) + 1
        raise InputError(
            f"bytes that are not UTF-8 text (byte 0x{data[exc.start]:02x})",
            file=path,
            line=line,
            column=col,
        ) from None


def parse_yaml(text: str, path: str, limits: Limits = DEFAULT_LIMITS) -> Node:
    """Parse one YAML document into a :class:`Node` tree."""
    if not text.strip() or all(
        not ln.strip() or ln.lstrip().startswith("#") for ln in text.splitlines()
    ):
        raise InputError("the file is empty", file=path)

    def err(msg: str, mark, exc=InputError, field: str | None = None) -> InputError:
        return exc(msg, file=path, line=mark.line + 1, column=mark.column + 1, field=field)

    def where(extra: str | None = None) -> str | None:
        """The dotted field path of the collection being built (plus ``extra``)."""
        parts = [k.text if isinstance(k, Scalar) else str(k) for k in names if k is not None]
        if extra is not None:
            parts.append(extra)
        return ".".join(parts) or None

    root: Node | None = None
    stack: list[Node] = []
    pending_key: list[Scalar | None] = []
    seen_keys: list[dict[str, Scalar]] = []
    names: list = []  # the key (or list index) under which each open collection sits
    documents = 0

    def attach(node: Node, mark) -> None:
        nonlocal root
        if not stack:
            root = node
            return
        parent = stack[-1]
        if type(parent) is Sequence:
            parent.items.append(node)
            return
        key = pending_key[-1]
        if key is None:
            if type(node) is not Scalar:
                raise err("a key must be plain text, not " + kind_name(node), mark)
            seen = seen_keys[-1]
            if node.text in seen:
                first = seen[node.text]
                raise err(
                    f"key '{node.text}' is given twice (first on line {first.line})", mark,
                    field=where(node.text),
                )
            seen[node.text] = node
            pending_key[-1] = node
        else:
            parent.items.append((key, node))
            pending_key[-1] = None

    # The events are read from the parser itself, one call each, and told apart
    # by their exact class (PyYAML's own ``yaml.parse`` adds a generator and a
    # check per event, and the isinstance tests below ran for every event: about
    # half of this function's time on a 1.6 MB model).  The tests are the same,
    # in the same order, so the same file gives the same error.
    parser = None
    try:
        parser = _Loader(text)  # (inside: the pure-Python reader checks the text here)
        get_event = parser.get_event
        while True:
            ev = get_event()
            kind = type(ev)
            if kind is ScalarEvent:
                # the common case first: a scalar with no anchor and no tag,
                # whose parent is open on the stack (see attach)
                mark = ev.start_mark
                if ev.anchor is not None:
                    raise err(f"anchors (&{ev.anchor}) are not allowed in exactlp files", mark)
                tag = ev.tag
                if tag is not None and tag != "!":
                    implicit = ev.implicit
                    if not (implicit is True or (isinstance(implicit, tuple) and any(implicit))):
                        raise err(f"YAML tags ({tag}) are not allowed in exactlp files", mark)
                node = Scalar(mark.line + 1, mark.column + 1, ev.value, ev.style or None)
                if stack:
                    parent = stack[-1]
                    if type(parent) is Sequence:
                        parent.items.append(node)
                        continue
                    key = pending_key[-1]
                    if key is not None:
                        parent.items.append((key, node))
                        pending_key[-1] = None
                        continue
                    seen = seen_keys[-1]
                    if node.text not in seen:  # (a key given twice: the error in attach)
                        seen[node.text] = pending_key[-1] = node
                        continue
                attach(node, mark)
            elif kind is MappingEndEvent or kind is SequenceEndEvent:
                names.pop()
                stack.pop()
                pending_key.pop()
                seen_keys.pop()
            elif kind is MappingStartEvent or kind is SequenceStartEvent:
                mark = ev.start_mark
                if ev.anchor is not None:
                    raise err(f"anchors (&{ev.anchor}) are not allowed in exactlp files", mark)
                tag = ev.tag
                if tag is not None and tag != "!":
                    raise err(f"YAML tags ({tag}) are not allowed in exactlp files", mark)
                if len(stack) >= limits.max_depth:
                    raise err(
                        f"nesting is deeper than the limit of {limits.max_depth}", mark, LimitError
                    )
                node = (
                    Mapping(mark.line + 1, mark.column + 1)
                    if kind is MappingStartEvent
                    else Sequence(mark.line + 1, mark.column + 1)
                )
                parent = stack[-1] if stack else None
                if type(parent) is Mapping:
                    names.append(pending_key[-1])
                elif type(parent) is Sequence:
                    # counted from 1, as the model's own messages count tiers
                    # (objectives.1 is the first)
                    names.append(str(len(parent.items) + 1))
                else:
                    names.append(None)
                attach(node, mark)
                stack.append(node)
                pending_key.append(None)
                seen_keys.append({})
            elif kind is AliasEvent:
                raise err("anchors and aliases (*name) are not allowed in exactlp files", ev.start_mark)
            elif kind is DocumentStartEvent:
                documents += 1
                if documents > 1:
                    raise err("the file holds more than one YAML document", ev.start_mark)
            elif kind is StreamEndEvent or ev is None:
                break
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        problem = (exc.problem or exc.context or "invalid YAML").strip()
        if mark is None:
            raise InputError(f"invalid YAML: {problem}", file=path) from None
        raise InputError(
            f"invalid YAML: {problem}", file=path, line=mark.line + 1, column=mark.column + 1
        ) from None
    except yaml.YAMLError as exc:
        raise InputError(f"invalid YAML: {str(exc).splitlines()[0]}", file=path) from None
    except RecursionError:  # pragma: no cover - the C and Python parsers are iterative
        raise LimitError("nesting is too deep", file=path) from None
    finally:
        if parser is not None:
            parser.dispose()
    if root is None:
        raise InputError("the file is empty", file=path)
    return root


def load_tree(path: str | os.PathLike, limits: Limits = DEFAULT_LIMITS) -> Node:
    p = os.fspath(path)
    return parse_yaml(read_text(p, limits), p, limits)
