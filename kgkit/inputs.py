"""The one place where what reaches kgkit from outside is read and checked.

Files, command-line text, YAML and JSON all come in through these functions, which
turn every problem into one :class:`~kgkit.errors.KgkitError` of one line naming the
file (and line, where there is one) and the cause:

- :func:`read_text_file` / :func:`read_bytes_file`: a missing file, a folder, a device
  or pipe, no permission, a file over its size limit, text that is not UTF-8.
- :func:`load_yaml` / :func:`read_yaml`: YAML with limits on nesting, alias expansion
  and size, duplicate keys refused, integers bounded, no ``.nan`` or ``.inf``.
- :func:`load_json` / :func:`read_json`: the same limits for JSON.
- :func:`check_text` (text that is not UTF-8, e.g. a command-line argument),
  :func:`parse_int` (an integer with bounds), :func:`check_number`.
- :func:`shape_error`: where parsed data first differs from the types its readers
  expect (``report.json``, ``topics.jsonl``).
- :func:`file_error` / :func:`describe_os_error`: any ``OSError`` met reading or writing
  a path, as one line.

Messages show control characters escaped (:func:`kgkit.errors.one_line`).

>>> load_yaml("a: 1\\nb: [x, y]\\n", "f.yaml").data
{'a': 1, 'b': ['x', 'y']}
>>> load_yaml("a: 1\\na: 2\\n", "f.yaml").data
Traceback (most recent call last):
...
kgkit.errors.InputError: f.yaml:2: key 'a' given twice (first on line 1)
>>> parse_int("12", "max_depth", minimum=0)
12
"""

from __future__ import annotations

import errno
import json
import math
import os
import re
import stat
from dataclasses import dataclass, field
from pathlib import Path

import yaml

from kgkit.errors import ArgumentError, InputError, KgkitError, one_line

__all__ = [
    "ENVIRONMENT_ERRNOS",
    "MAX_INT_DIGITS",
    "MAX_JSON_DEPTH",
    "MAX_TEXT_BYTES",
    "MAX_YAML_DEPTH",
    "MAX_YAML_NODES",
    "YamlDocument",
    "check_number",
    "check_text",
    "decode_text",
    "describe_os_error",
    "file_error",
    "load_json",
    "load_yaml",
    "one_line",
    "os_error_cause",
    "parse_int",
    "read_bytes_file",
    "read_json",
    "read_text_file",
    "read_yaml",
    "shape_error",
]

#: Largest file read whole as text (YAML settings, specs, curation, templates, reports).
MAX_TEXT_BYTES = 64 << 20
#: Deepest nesting of mappings and lists in a YAML file (kgkit's own files need under 10).
MAX_YAML_DEPTH = 64
#: Most nodes a YAML document may hold once its aliases are expanded (an alias bomb
#: of a few lines expands to billions; 20,000 curation edits hold about 200,000).
MAX_YAML_NODES = 2_000_000
#: Deepest nesting in a JSON document kgkit reads whole (reports, manifests).
MAX_JSON_DEPTH = 200
#: Most digits of an integer in any input (Python refuses to convert over 4,300).
MAX_INT_DIGITS = 30

_INT = re.compile(r"[+-]?[0-9]+")


# --- text ----------------------------------------------------------------------------


def check_text(value: str, what: str, error: type[KgkitError] = ArgumentError) -> str:
    """``value`` if it is valid Unicode text, else one line naming ``what``.

    Text from the command line or a file name that was not UTF-8 arrives with its bad
    bytes kept as lone surrogates; nothing downstream can encode it.

    >>> check_text("café", "term")
    'café'
    >>> check_text("caf\\udce9", "term")
    Traceback (most recent call last):
    ...
    kgkit.errors.ArgumentError: term: not UTF-8 text (byte \\xe9 at position 4)
    """
    try:
        value.encode("utf-8")
    except UnicodeEncodeError as exc:
        bad = one_line(value[exc.start])
        cause = f"not UTF-8 text (byte {bad} at position {exc.start + 1})"
        if error is ArgumentError:
            raise ArgumentError(what, cause) from None
        raise error(f"{what}: {cause}") from None
    return value


def parse_int(
    text: str | int,
    what: str,
    minimum: int | None = None,
    maximum: int | None = None,
    error: type[KgkitError] = ArgumentError,
) -> int:
    """An integer read from ``text``, within ``minimum``..``maximum`` and at most
    :data:`MAX_INT_DIGITS` digits long.

    >>> parse_int("-3", "n")
    -3
    >>> parse_int("9" * 5000, "max_depth")
    Traceback (most recent call last):
    ...
    kgkit.errors.ArgumentError: max_depth: an integer of 5000 digits is too long (at most 30)
    """

    def fail(cause: str):
        if error is ArgumentError:
            return ArgumentError(what, cause)
        return error(f"{what}: {cause}")

    if isinstance(text, bool):
        raise fail(f"must be an integer, got {text!r}")
    if isinstance(text, int):
        value = text
        if value.bit_length() > MAX_INT_DIGITS * 4:
            raise fail(f"an integer of more than {MAX_INT_DIGITS} digits is too long")
    else:
        s = str(text).strip().replace("_", "")
        if not _INT.fullmatch(s):
            raise fail(f"must be an integer, got {one_line(repr(str(text)[:40]))}")
        digits = len(s.lstrip("+-"))
        if digits > MAX_INT_DIGITS:
            raise fail(f"an integer of {digits} digits is too long (at most {MAX_INT_DIGITS})")
        value = int(s)
    if minimum is not None and value < minimum:
        raise fail(f"must be at least {minimum}, got {value}")
    if maximum is not None and value > maximum:
        raise fail(f"must be at most {maximum}, got {value}")
    return value


def check_number(value: object, what: str, error: type[KgkitError] = ArgumentError) -> float:
    """``value`` as a finite float; booleans, text, NaN and infinities are refused.

    >>> check_number(0.5, "min")
    0.5
    >>> check_number(float("nan"), "min")
    Traceback (most recent call last):
    ...
    kgkit.errors.ArgumentError: min: must be a finite number, got nan
    """
    if isinstance(value, bool) or not isinstance(value, int | float):
        cause = f"must be a number, got {value!r}"
    elif isinstance(value, int):
        return float(parse_int(value, what, error=error))
    elif not math.isfinite(value):
        cause = f"must be a finite number, got {value!r}"
    else:
        return float(value)
    if error is ArgumentError:
        raise ArgumentError(what, cause)
    raise error(f"{what}: {cause}")


# --- files ---------------------------------------------------------------------------

_CAUSES = {
    errno.ENOENT: "no such file",
    errno.EACCES: "permission denied",
    errno.EPERM: "operation not permitted",
    errno.EISDIR: "is a folder, not a file",
    errno.ENOTDIR: "a part of the path is not a folder",
    errno.EROFS: "read-only file system",
    errno.ENOSPC: "no space left on the device",
    errno.ELOOP: "too many symbolic links",
    errno.ENAMETOOLONG: "file name too long",
}


#: errno values that mean the environment (permissions, space, a read-only disk), not a bug
ENVIRONMENT_ERRNOS = frozenset(
    {errno.EACCES, errno.EPERM, errno.EROFS, errno.ENOSPC, errno.EDQUOT, errno.ENAMETOOLONG}
)


def file_error(
    path: Path | str, exc: OSError, action: str = "read", error: type[KgkitError] = InputError
) -> KgkitError:
    """One line for an ``OSError`` met when ``action`` (read, write, create...) ``path``.

    >>> str(file_error("/x/y", PermissionError(13, "Permission denied"), "write"))
    '/x/y: cannot write (permission denied)'
    """
    cause = os_error_cause(exc)
    if exc.errno == errno.ENOENT and action == "read":
        return error(f"{one_line(str(path))}: no such file")
    return error(f"{one_line(str(path))}: cannot {action} ({cause})")


def os_error_cause(exc: OSError) -> str:
    """A short cause for an ``OSError``: ``permission denied``, ``no space left...``."""
    return _CAUSES.get(exc.errno or 0) or (exc.strerror or type(exc).__name__).lower()


def describe_os_error(exc: OSError) -> str:
    """One line for an ``OSError`` whose action is not known: ``PATH: cause``.

    >>> describe_os_error(PermissionError(13, "Permission denied", "/x/store.lock"))
    '/x/store.lock: permission denied'
    """
    names = [n for n in (exc.filename, exc.filename2) if n is not None]
    where = " -> ".join(one_line(os.fsdecode(n)) for n in names) or "a file"
    return f"{where}: {os_error_cause(exc)}"


def _open_regular(path: Path, what: str, error: type[KgkitError], max_bytes: int):
    """An open binary file object of the regular file ``path`` (no device, folder, pipe)."""
    label = one_line(str(path))
    try:
        st = os.stat(path)
    except OSError as exc:
        raise file_error(path, exc, "read", error) from None
    if stat.S_ISDIR(st.st_mode):
        raise error(f"{label}: is a folder, not {what}")
    if not stat.S_ISREG(st.st_mode):
        raise error(f"{label}: not a regular file (a device, pipe or socket), not {what}")
    if st.st_size > max_bytes:
        raise error(f"{label}: {st.st_size} bytes, more than the {max_bytes} bytes read for {what}")
    try:
        return open(path, "rb")  # noqa: SIM115 - the caller closes it
    except OSError as exc:
        raise file_error(path, exc, "read", error) from None


def read_bytes_file(
    path: Path | str,
    what: str = "a file",
    error: type[KgkitError] = InputError,
    max_bytes: int = MAX_TEXT_BYTES,
) -> bytes:
    """The bytes of the regular file ``path``, or one line saying why it cannot be read."""
    with _open_regular(Path(path), what, error, max_bytes) as fh:
        try:
            data = fh.read(max_bytes + 1)
        except OSError as exc:
            raise file_error(path, exc, "read", error) from None
    if len(data) > max_bytes:
        raise error(f"{one_line(str(path))}: more than the {max_bytes} bytes read for {what}")
    return data


def decode_text(data: bytes, label: str, error: type[KgkitError] = InputError) -> str:
    """``data`` decoded as UTF-8 (a leading byte-order mark dropped), or one line naming
    the line and column of the first byte that is not UTF-8."""
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        column = exc.start - (data.rfind(b"\n", 0, exc.start) + 1) + 1
        raise error(
            f"{one_line(label)}:{line}:{column}: not UTF-8 text (byte \\x{data[exc.start]:02x})"
        ) from None
    return text[1:] if text.startswith("\ufeff") else text


def read_text_file(
    path: Path | str,
    what: str = "a text file",
    error: type[KgkitError] = InputError,
    max_bytes: int = MAX_TEXT_BYTES,
) -> str:
    """The UTF-8 text of the regular file ``path``, or one line saying why not.

    A missing file, a folder, a device or pipe, a file without read permission, one
    over ``max_bytes`` and bytes that are not UTF-8 each give ``error`` with a one-line
    message naming the file (and the line for bad bytes). A byte-order mark is dropped.
    """
    return decode_text(read_bytes_file(path, what, error, max_bytes), str(path), error)


# --- YAML ----------------------------------------------------------------------------


@dataclass(frozen=True)
class YamlDocument:
    """A loaded YAML document: its data and the 1-based line of each key path.

    Key paths are dotted with list positions in brackets: ``select[0].params.root``.
    """

    data: object
    source: str
    lines: dict[str, int] = field(default_factory=dict)

    def line_of(self, key: str) -> int | None:
        """The line of ``key``, or of its nearest enclosing key that has one."""
        while key:
            line = self.lines.get(key)
            if line is not None:
                return line
            parent = re.sub(r"(\.[^.\[]*|\[\d+\])$", "", key)
            if parent == key:
                break
            key = parent
        return None


class _LimitedLoader(getattr(yaml, "CSafeLoader", yaml.SafeLoader)):  # type: ignore[misc]
    """The safe loader's parser and scalar constructors, with numbers bounded."""

    def construct_yaml_int(self, node):
        digits = len(re.sub(r"[^0-9a-fA-F]", "", str(node.value)))
        if digits > MAX_INT_DIGITS:
            raise yaml.constructor.ConstructorError(
                None,
                None,
                f"an integer of {digits} digits is too long (at most {MAX_INT_DIGITS})",
                node.start_mark,
            )
        return super().construct_yaml_int(node)

    def construct_yaml_float(self, node):
        value = super().construct_yaml_float(node)
        if not math.isfinite(value):
            raise yaml.constructor.ConstructorError(
                None,
                None,
                f"{node.value!r} is not a finite number",
                node.start_mark,
            )
        return value


_LimitedLoader.add_constructor("tag:yaml.org,2002:int", _LimitedLoader.construct_yaml_int)
_LimitedLoader.add_constructor("tag:yaml.org,2002:float", _LimitedLoader.construct_yaml_float)


def _yaml_fail(source: str, line: int | None, cause: str, error: type[KgkitError]):
    where = f"{one_line(source)}:{line}" if line else one_line(source)
    return error(f"{where}: {cause}")


_STR = "tag:yaml.org,2002:str"
_MERGE = "tag:yaml.org,2002:merge"
_DEFAULT_TAGS = (None, "!", "tag:yaml.org,2002:seq", "tag:yaml.org,2002:map")
_NO_KEY = object()
_MERGE_KEY = object()  # stands for a "<<" key until its mapping ends


def _resolve_plain(value: str) -> str:
    """The implicit tag of a plain scalar (the safe resolver's rules, first char indexed)."""
    table = _LimitedLoader.yaml_implicit_resolvers
    for tag, regexp in table.get(value[0] if value else "", ()):
        if regexp.match(value):
            return tag
    return _STR


class _Frame:
    """A mapping or list being built, with what the checks need."""

    __slots__ = ("obj", "path", "anchor", "start", "size", "key", "key_line", "seen", "merges")

    def __init__(self, obj, path: str, anchor: str | None, start: int):
        self.obj, self.path, self.anchor, self.start, self.size = obj, path, anchor, start, 1
        self.key, self.key_line, self.seen, self.merges = _NO_KEY, start, {}, []


def _build(loader, fail, max_depth: int, max_nodes: int):
    """The document's data and key lines from one pass over the parser's events.

    Depth, expanded size (aliases counted, never expanded), duplicate keys and tags are
    checked as the events come, so a bad file stops at its first fault.
    """
    constructors = loader.yaml_constructors
    anchors: dict[str, object] = {}
    sizes: dict[str, int] = {}
    lines: dict[str, int] = {}
    stack: list[_Frame] = []
    root: list = []
    total = 0
    documents = 0

    def add(value, line: int, size: int) -> None:
        if not stack:
            root.append(value)
            return
        f = stack[-1]
        f.size += size
        obj = f.obj
        if type(obj) is list:
            lines[f"{f.path}[{len(obj)}]"] = line
            obj.append(value)
        elif f.key is _NO_KEY:
            if isinstance(value, dict | list):
                raise fail(line, "a mapping key must be a single value")
            f.key, f.key_line = value, line
            if value is not _MERGE_KEY:
                lines.setdefault(f"{f.path}.{value}" if f.path else str(value), line)
        else:
            key = f.key
            f.key = _NO_KEY
            if key is _MERGE_KEY:
                f.merges.append((value, f.key_line))
                return
            try:
                first = f.seen.get(key)
            except TypeError:
                raise fail(f.key_line, "a mapping key must be a single value") from None
            if first is not None:
                raise fail(f.key_line, f"key {key!r} given twice (first on line {first})")
            f.seen[key] = f.key_line
            obj[key] = value

    while loader.check_event():
        ev = loader.get_event()
        kind = type(ev)
        if kind is yaml.ScalarEvent:
            tag = ev.tag
            if tag is None or tag == "!":
                tag = _resolve_plain(ev.value) if ev.implicit[0] else _STR
            if tag == _STR:
                value = ev.value
            elif tag == _MERGE and stack and type(stack[-1].obj) is dict:
                value = _MERGE_KEY
            else:
                construct = constructors.get(tag)
                if construct is None or tag == _MERGE:
                    raise fail(ev.start_mark.line + 1, f"the tag {tag!r} is not supported")
                node = yaml.ScalarNode(tag, ev.value, ev.start_mark, ev.end_mark, ev.style)
                try:
                    value = construct(loader, node)
                except (ValueError, TypeError, AttributeError, OverflowError):  # !!int abc...
                    short = tag.rsplit(":", 1)[-1]
                    raise fail(
                        ev.start_mark.line + 1, f"{one_line(repr(ev.value))} is not a valid {short}"
                    ) from None
            if ev.anchor:
                anchors[ev.anchor], sizes[ev.anchor] = value, 1
            total += 1
            add(value, ev.start_mark.line + 1, 1)
        elif kind is yaml.AliasEvent:
            if ev.anchor not in anchors:
                raise fail(ev.start_mark.line + 1, f"unknown alias {ev.anchor!r}")
            n = sizes.get(ev.anchor, 1)
            total += n
            if total > max_nodes:
                break
            add(anchors[ev.anchor], ev.start_mark.line + 1, n)
        elif kind is yaml.MappingStartEvent or kind is yaml.SequenceStartEvent:
            line = ev.start_mark.line + 1
            if len(stack) >= max_depth:
                raise fail(line, f"nested more than {max_depth} levels deep")
            if ev.tag not in _DEFAULT_TAGS:
                raise fail(line, f"the tag {ev.tag!r} is not supported")
            obj = {} if kind is yaml.MappingStartEvent else []
            if ev.anchor:
                anchors[ev.anchor] = obj
            if stack:
                parent = stack[-1]
                if type(parent.obj) is list:
                    path = f"{parent.path}[{len(parent.obj)}]"
                elif parent.key is _NO_KEY:
                    raise fail(line, "a mapping key must be a single value")
                else:
                    path = f"{parent.path}.{parent.key}" if parent.path else str(parent.key)
            else:
                path = ""
            stack.append(_Frame(obj, path, ev.anchor, line))
            total += 1
        elif kind is yaml.MappingEndEvent or kind is yaml.SequenceEndEvent:
            f = stack.pop()
            for merged, line in f.merges:  # keys of the mapping itself win, then earlier merges
                for m in merged if isinstance(merged, list) else [merged]:
                    if not isinstance(m, dict):
                        raise fail(line, "a merge (<<) takes a mapping or a list of mappings")
                    for k, v in m.items():
                        f.obj.setdefault(k, v)
            if f.anchor:
                sizes[f.anchor] = f.size
            add(f.obj, f.start, f.size)
        elif kind is yaml.DocumentStartEvent:
            documents += 1
            if documents > 1:
                raise fail(ev.start_mark.line + 1, "holds more than one YAML document")
        if total > max_nodes:
            break
    if total > max_nodes:
        raise fail(
            ev.start_mark.line + 1, f"more than {max_nodes} values once its aliases are expanded"
        )
    return (root[0] if root else None), lines


def load_yaml(
    text: str,
    source: str,
    error: type[KgkitError] = InputError,
    max_depth: int = MAX_YAML_DEPTH,
    max_nodes: int = MAX_YAML_NODES,
    max_bytes: int = MAX_TEXT_BYTES,
) -> YamlDocument:
    """Parse one YAML document with limits; problems become ``error("SOURCE:LINE: cause")``.

    Refused: text over ``max_bytes``, nesting deeper than ``max_depth``, more than
    ``max_nodes`` values with aliases expanded (an alias bomb, at once), a key given twice
    in one mapping, integers over :data:`MAX_INT_DIGITS` digits, ``.nan`` and ``.inf``,
    and several documents in one file.
    """
    if len(text) > max_bytes:
        raise _yaml_fail(source, None, f"more than {max_bytes} characters of YAML", error)
    loader = _LimitedLoader(text)
    try:
        data, lines = _build(
            loader,
            lambda line, cause: _yaml_fail(source, line, cause, error),
            max_depth,
            max_nodes,
        )
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        problem = getattr(exc, "problem", None) or "malformed YAML"
        raise _yaml_fail(source, mark.line + 1 if mark else None, problem, error) from None
    finally:
        loader.dispose()
    return YamlDocument(data, source, lines)


def read_yaml(
    path: Path | str,
    what: str = "a YAML file",
    error: type[KgkitError] = InputError,
    **limits,
) -> YamlDocument:
    """:func:`read_text_file` then :func:`load_yaml`, with the file as the source."""
    return load_yaml(read_text_file(path, what, error), str(path), error, **limits)


# --- shapes of parsed data -------------------------------------------------------------

_KIND_NAMES = {
    str: "text",
    int: "an integer",
    float: "a number",
    bool: "true or false",
    dict: "an object",
    list: "a list",
    type(None): "null",
}


def _kind_name(shape) -> str:
    if isinstance(shape, tuple):
        return " or ".join(_kind_name(s) for s in shape)
    if isinstance(shape, list):
        return "a list"
    if isinstance(shape, dict):
        return "an object"
    return _KIND_NAMES.get(shape, shape.__name__)


def shape_error(value: object, shape, where: str = "") -> str | None:
    """Where ``value`` (parsed JSON or YAML) first differs from ``shape``, or None.

    A shape is a type (``int`` refuses booleans), a tuple of shapes (any of them), a
    one-item list ``[item shape]``, or a dict: ``{str: value shape}`` for a mapping of
    any keys, or ``{"key": shape, ...}`` checking the keys present (others are free).

    >>> shape_error({"counts": {"a": 1}, "roots": ["x", 2]}, {"counts": {str: int}, "roots": [str]})
    "'roots[1]' must be text, got 2"
    >>> shape_error([1], {"a": int}) is None
    False
    """
    if isinstance(shape, tuple):
        errors = [shape_error(value, s, where) for s in shape]
        if None in errors:
            return None
        for s, err in zip(shape, errors, strict=True):  # the inner fault of the right kind
            if (isinstance(s, dict) and isinstance(value, dict)) or (
                isinstance(s, list) and isinstance(value, list)
            ):
                return err
    elif isinstance(shape, list):
        if isinstance(value, list):
            for i, item in enumerate(value):
                err = shape_error(item, shape[0], f"{where}[{i}]")
                if err:
                    return err
            return None
    elif isinstance(shape, dict):
        if isinstance(value, dict):
            if str in shape:
                for k, v in value.items():
                    err = shape_error(v, shape[str], f"{where}.{k}" if where else str(k))
                    if err:
                        return err
                return None
            for k, sub in shape.items():
                if k in value:
                    err = shape_error(value[k], sub, f"{where}.{k}" if where else k)
                    if err:
                        return err
            return None
    elif shape is int or shape is float:
        if not isinstance(value, bool) and isinstance(value, int if shape is int else int | float):
            return None
    elif isinstance(value, shape):
        return None
    shown = repr(value) if len(repr(value)) <= 40 else type(value).__name__
    return f"{(repr(where) + ' ') if where else ''}must be {_kind_name(shape)}, got {shown}"


# --- JSON ----------------------------------------------------------------------------


def _json_int(s: str) -> int:
    if len(s.lstrip("-")) > MAX_INT_DIGITS:
        raise ValueError(f"an integer of {len(s.lstrip('-'))} digits is too long")
    return int(s)


def _json_constant(name: str):
    raise ValueError(f"{name} is not a JSON number")


def _json_depth(text: str, max_depth: int) -> int | None:
    """The offset where nesting first passes ``max_depth`` (strings skipped), or None."""
    if text.count("[") + text.count("{") <= max_depth:
        return None
    depth = 0
    for m in re.finditer(r'"(?:[^"\\]|\\.)*"|[\[\]{}]', text):
        c = m.group()
        if c in "[{":
            depth += 1
            if depth > max_depth:
                return m.start()
        elif c in "]}":
            depth -= 1
    return None


def load_json(
    text: str,
    source: str,
    error: type[KgkitError] = InputError,
    max_depth: int = MAX_JSON_DEPTH,
) -> object:
    """Parse a JSON document with nesting and integers bounded and no NaN or Infinity."""
    where = _json_depth(text, max_depth)
    if where is not None:
        line = text.count("\n", 0, where) + 1
        raise error(f"{one_line(source)}:{line}: nested more than {max_depth} levels deep")
    try:
        return json.loads(text, parse_int=_json_int, parse_constant=_json_constant)
    except json.JSONDecodeError as exc:
        raise error(f"{one_line(source)}:{exc.lineno}:{exc.colno}: {exc.msg}") from None
    except (ValueError, RecursionError) as exc:
        raise error(f"{one_line(source)}: {one_line(str(exc))}") from None


def read_json(
    path: Path | str,
    what: str = "a JSON file",
    error: type[KgkitError] = InputError,
    max_depth: int = MAX_JSON_DEPTH,
) -> object:
    """:func:`read_text_file` then :func:`load_json`, with the file as the source."""
    return load_json(read_text_file(path, what, error), str(path), error, max_depth)
