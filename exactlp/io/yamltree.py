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


@dataclass
class Node:
    line: int
    column: int


@dataclass
class Scalar(Node):
    text: str
    #: None for a plain scalar, else the quote character or block indicator
    style: str | None = None

    @property
    def is_null(self) -> bool:
        return self.style is None and self.text in ("", "~", "null", "Null", "NULL")


@dataclass
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


@dataclass
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
        if isinstance(parent, Sequence):
            parent.items.append(node)
            return
        assert isinstance(parent, Mapping)
        key = pending_key[-1]
        if key is None:
            if not isinstance(node, Scalar):
                raise err("a key must be plain text, not " + kind_name(node), mark)
            if node.text in seen_keys[-1]:
                first = seen_keys[-1][node.text]
                raise err(
                    f"key '{node.text}' is given twice (first on line {first.line})", mark,
                    field=where(node.text),
                )
            seen_keys[-1][node.text] = node
            pending_key[-1] = node
        else:
            parent.items.append((key, node))
            pending_key[-1] = None

    try:
        for ev in yaml.parse(text, Loader=_Loader):
            mark = ev.start_mark
            if isinstance(ev, yaml.AliasEvent):
                raise err("anchors and aliases (*name) are not allowed in exactlp files", mark)
            anchor = getattr(ev, "anchor", None)
            if anchor is not None:
                raise err(f"anchors (&{anchor}) are not allowed in exactlp files", mark)
            tag = getattr(ev, "tag", None)
            if tag is not None and tag != "!":
                implicit = getattr(ev, "implicit", None)
                explicit = not (implicit is True or (isinstance(implicit, tuple) and any(implicit)))
                if explicit or isinstance(ev, (yaml.MappingStartEvent, yaml.SequenceStartEvent)):
                    raise err(f"YAML tags ({tag}) are not allowed in exactlp files", mark)
            if isinstance(ev, yaml.DocumentStartEvent):
                documents += 1
                if documents > 1:
                    raise err("the file holds more than one YAML document", mark)
            elif isinstance(ev, yaml.ScalarEvent):
                style = ev.style if ev.style else None
                attach(Scalar(mark.line + 1, mark.column + 1, ev.value, style), mark)
            elif isinstance(ev, (yaml.MappingStartEvent, yaml.SequenceStartEvent)):
                if len(stack) >= limits.max_depth:
                    raise err(
                        f"nesting is deeper than the limit of {limits.max_depth}", mark, LimitError
                    )
                node: Node = (
                    Mapping(mark.line + 1, mark.column + 1)
                    if isinstance(ev, yaml.MappingStartEvent)
                    else Sequence(mark.line + 1, mark.column + 1)
                )
                parent = stack[-1] if stack else None
                if isinstance(parent, Mapping):
                    names.append(pending_key[-1])
                elif isinstance(parent, Sequence):
                    names.append(str(len(parent.items)))
                else:
                    names.append(None)
                attach(node, mark)
                stack.append(node)
                pending_key.append(None)
                seen_keys.append({})
            elif isinstance(ev, (yaml.MappingEndEvent, yaml.SequenceEndEvent)):
                names.pop()
                stack.pop()
                pending_key.pop()
                seen_keys.pop()
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
    if root is None:
        raise InputError("the file is empty", file=path)
    return root


def load_tree(path: str | os.PathLike, limits: Limits = DEFAULT_LIMITS) -> Node:
    p = os.fspath(path)
    return parse_yaml(read_text(p, limits), p, limits)
