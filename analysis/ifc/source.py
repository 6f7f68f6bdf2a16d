"""Opening the input IFC file: checks the file itself before ifcopenshell parses it, and the parser's findings after.

`open_source` is the one way the reader and the writer open a model:

* only a regular file is opened (a pipe, device or socket is refused before
  ifcopenshell touches it: it crashes on a pipe, and a FIFO nobody writes
  to would block for ever);
* the bytes are read once in a stream to take their SHA-256 (`SourceStamp`),
  so the writer can prove that the file it writes the results into is the
  one that was analysed (`verify_unchanged`);
* a UTF-8 byte-order mark is read through (ifcopenshell cannot parse the
  header behind one): the rest of the file is parsed from a temporary copy,
  the input is left as it is;
* a STEP file that does not end with ``END-ISO-10303-21;`` is refused as
  truncated, naming the last complete entity;
* ifcopenshell's log of the parse is turned into messages with a line
  number and the entity: syntax errors (exit 2), entity ids defined twice
  (exit 2: the file is ambiguous), values that are not numbers (``NAN``,
  dropped by the parser: exit 2), and as warnings dangling references,
  missing attribute values, entity classes not in the schema and duplicate
  GlobalIds.
"""
from __future__ import annotations

import contextlib
import hashlib
import os
import re
import stat
import tempfile
import weakref
from collections import defaultdict
from dataclasses import dataclass, field
from collections.abc import Callable
from typing import Any

from ..errors import Diagnostic, IfcInputError, entity_label
from ..warm_imports import while_parsing

__all__ = ["SourceStamp", "Source", "open_source", "verify_unchanged", "dangling_references", "parser_findings",
           "SUPPORTED_SCHEMAS"]

SUPPORTED_SCHEMAS = ("IFC2X3", "IFC4", "IFC4X3", "IFC4X3_ADD1", "IFC4X3_ADD2")
_CHUNK = 1 << 22
_BOM = b"\xef\xbb\xbf"
_TAIL = 1 << 16
_EXAMPLES = 5

_LOG_LINE = re.compile(r"^\[(\w+)\](?: \[(\w+)\])? \[[^\]]*\] (.*)$")
_OFFSET = re.compile(r" at offset (\d+)")
_ENTITY_START = re.compile(rb"#(\d+)\s*=\s*([A-Za-z0-9_]*)")

_DANGLING: weakref.WeakKeyDictionary[Any, dict[int, list[int]]] = weakref.WeakKeyDictionary()
_FINDINGS: dict[str, list[str]] = {}  # absolute path -> the parser's warnings at its last opening


def parser_findings(path: str | os.PathLike[str]) -> list[str]:
    """The parser's warnings (dangling references, missing attributes, ...) from the last `open_source` of ``path``.

    A reader that fails on such a file with an AttributeError or TypeError
    failed because of the file: callers turn that into an input error.
    """
    return list(_FINDINGS.get(os.path.abspath(os.fspath(path)), ()))


@dataclass(frozen=True, slots=True)
class SourceStamp:
    """Identity and content of the input file as it was read."""

    path: str
    device: int
    inode: int
    size: int
    mtime_ns: int
    sha256: str


@dataclass
class Source:
    """An opened model: the ifcopenshell file, its stamp, and what the parser said about it."""

    file: Any
    stamp: SourceStamp
    diagnostics: list[Diagnostic] = field(default_factory=list)
    dangling: dict[int, list[int]] = field(default_factory=dict)  # entity id -> ids it refers to that do not exist


def dangling_references(ifc_file) -> dict[int, list[int]]:
    """Entity id -> referenced ids the parser did not find, for a file opened by `open_source`."""
    try:
        return _DANGLING.get(ifc_file, {})
    except TypeError:
        return {}


def _kind_of(mode: int) -> str | None:
    if stat.S_ISREG(mode):
        return None
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a pipe"
    if stat.S_ISCHR(mode):
        return "a character device"
    if stat.S_ISBLK(mode):
        return "a block device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def check_regular(path: str) -> os.stat_result:
    """``os.stat(path)`` of a regular file; IfcInputError for anything else (never blocks)."""
    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise IfcInputError(f"{path}: no such file (it does not exist)") from None
    except OSError as exc:
        raise IfcInputError(f"{path}: cannot be read ({exc.strerror or exc})") from None
    kind = _kind_of(st.st_mode)
    if kind == "a folder":
        raise IfcInputError(f"{path}: is a folder, not an IFC file")
    if kind is not None:
        raise IfcInputError(f"{path}: is {kind}, not a regular file; save the model to a file first "
                            f"(e.g. `cat ... > model.ifc`) and analyse that")
    return st


def _stamp_of(path: str, st: os.stat_result, digest: str) -> SourceStamp:
    return SourceStamp(os.path.abspath(path), st.st_dev, st.st_ino, st.st_size, st.st_mtime_ns, digest)


def _same(a: os.stat_result, b: os.stat_result) -> bool:
    return (a.st_dev, a.st_ino, a.st_size, a.st_mtime_ns) == (b.st_dev, b.st_ino, b.st_size, b.st_mtime_ns)


@dataclass
class _Scan:
    sha256: str
    head: bytes
    tail: bytes
    lines: int
    bom: bool
    copy: str | None  # temporary copy without the byte-order mark


def _read_through(path: str, st: os.stat_result) -> _Scan:
    """Stream the file once: hash, head, tail, line count; a copy without BOM where needed."""
    h = hashlib.sha256()
    head = b""
    tail = b""
    lines = 0
    copy_fd: int | None = None
    copy: str | None = None
    bom = False
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except OSError as exc:
        raise IfcInputError(f"{path}: cannot be read ({exc.strerror or exc})") from None
    try:
        if not _same(os.fstat(fd), st):
            raise IfcInputError(f"{path}: changed while it was being opened; try again")
        with open(fd, "rb", closefd=False) as fh:
            first = True
            while True:
                chunk = fh.read(_CHUNK)
                if not chunk:
                    break
                h.update(chunk)
                lines += chunk.count(b"\n")
                if first:
                    first = False
                    head = chunk[:4096]
                    if chunk.startswith(_BOM):
                        bom = True
                        copy_fd, copy = tempfile.mkstemp(prefix=f".plumbframe-{os.getpid()}-", suffix=".ifc")
                        chunk = chunk[len(_BOM):]
                if copy_fd is not None:
                    os.write(copy_fd, chunk)
                tail = (tail + chunk)[-_TAIL:]
    except OSError as exc:
        if copy:
            _remove(copy)
        raise IfcInputError(f"{path}: cannot be read ({exc.strerror or exc})") from None
    except BaseException:
        if copy:
            _remove(copy)
        raise
    finally:
        os.close(fd)
        if copy_fd is not None:
            os.close(copy_fd)
    return _Scan(h.hexdigest(), head, tail, lines, bom, copy)


def _remove(path: str) -> None:
    with contextlib.suppress(OSError):
        os.remove(path)


def _check_kind(path: str, scan: _Scan) -> str:
    """'step', 'zip' or 'xml'; IfcInputError for anything else."""
    head = scan.head[len(_BOM):] if scan.bom else scan.head
    text = head.lstrip()
    if not scan.head:
        raise IfcInputError(f"{path}: the file is empty")
    if text.startswith(b"ISO-10303-21"):
        return "step"
    if head.startswith(b"PK"):
        return "zip"
    if text.startswith(b"<") and b"ifc" in head.lower():
        return "xml"
    raise IfcInputError(f"{path}: not an IFC file (no ISO-10303-21 header)")


def _check_complete(path: str, scan: _Scan) -> None:
    """A STEP file ends with END-ISO-10303-21; without it the file was cut short."""
    if b"END-ISO-10303-21" in scan.tail:
        return
    last = list(_ENTITY_START.finditer(scan.tail))
    where = ""
    if last:
        m = last[-1]
        # the last entity whose statement is complete (ends with ';' before the next one or the end)
        complete = [x for x in last if scan.tail.find(b";", x.end()) != -1]
        m = complete[-1] if complete else m
        line = scan.lines - scan.tail[m.start():].count(b"\n") + 1
        where = f"; the last complete entity is #{int(m.group(1))} {m.group(2).decode('ascii', 'replace')} at line {line}"
    section = " (no ENDSEC either)" if b"ENDSEC" not in scan.tail else ""
    raise IfcInputError(f"{path}: the file is truncated: it does not end with END-ISO-10303-21{section}{where}. "
                        "It was probably copied or saved incompletely: save or copy it again")


def _line_and_entity(path: str, offset: int) -> tuple[int, str]:
    """Line number (1-based) and ``#id CLASS`` of the statement holding byte ``offset`` of the file."""
    line = 1
    done = 0
    window = b""
    try:
        with open(path, "rb") as fh:
            while done < offset:
                chunk = fh.read(min(_CHUNK, offset - done))
                if not chunk:
                    break
                line += chunk.count(b"\n")
                done += len(chunk)
                window = (window + chunk)[-8192:]
    except OSError:
        return line, ""
    starts = list(_ENTITY_START.finditer(window))
    entity = ""
    if starts:
        m = starts[-1]
        entity = f"#{int(m.group(1))} {m.group(2).decode('ascii', 'replace')}"
    return line, entity


def _parse_log(text: str) -> list[tuple[str, str, int | None]]:
    out = []
    for raw in text.splitlines():
        m = _LOG_LINE.match(raw.strip())
        if not m:
            continue
        level, message = m.group(1), m.group(3)
        om = _OFFSET.search(message)
        offset = int(om.group(1)) if om else None
        if om:
            message = (message[:om.start()] + message[om.end():]).strip()
        out.append((level, message, offset))
    return out


def _take_log() -> str:
    try:
        import ifcopenshell.ifcopenshell_wrapper as wrapper

        return str(wrapper.get_log() or "")
    except Exception:  # an ifcopenshell without a log: no findings
        return ""


def _schema_message(path: str, exc: BaseException) -> str | None:
    m = re.search(r"[Uu]nsupported schema:?\s*(\S+)", str(exc))
    if not m and type(exc).__name__ != "SchemaError":
        return None
    name = m.group(1) if m else "?"
    import ifcopenshell

    version = getattr(ifcopenshell, "version", "")
    hint = ""
    if name.upper().startswith("IFC4X"):
        hint = (f" {name} was an interim version of IFC4X3 (never an official release); export the model as "
                "IFC4X3 or IFC4 from the authoring tool. As a last resort, a copy whose header line "
                "FILE_SCHEMA names IFC4X3_ADD2 often reads, at your own risk")
    else:
        hint = " export the model as IFC4X3, IFC4 or IFC2X3 from the authoring tool"
    return (f"{path}: schema {name} is not supported by the IFC library (ifcopenshell {version} reads IFC2X3, IFC4 "
            f"and IFC4X3):{hint}")


def _syntax_message(path: str, parse_path: str, shift: int, exc: BaseException, log: list) -> str:
    for level, message, offset in log:
        if level == "error" and offset is not None:
            line, entity = _line_and_entity(parse_path, offset)
            where = f"line {line}" + (f", in {entity}" if entity else "")
            detail = message.replace("invalid valid token", "is not a valid token")
            if re.search(r"token [-+]?[0-9.]+E[-+]?\d{3,}", detail, re.I):
                detail += " (a number too large or too small for double precision)"
            elif "'" in detail:
                detail += " (a string left unterminated in this or an earlier entity?)"
            return f"{path}: syntax error at {where}: {detail}"
    return f"{path}: not a readable IFC file ({exc})"


_BAD_NUMBER = {"NAN": "not a number (NaN)", "INF": "infinite", "INFINITY": "infinite", "-INF": "infinite"}


def _findings(path: str, parse_path: str, shift: int, f, log: list) -> tuple[list[Diagnostic], dict[int, list[int]]]:
    """Errors raise IfcInputError; the rest become warnings (grouped by kind, a few examples each)."""
    duplicates: list[int] = []
    dangling: dict[int, list[int]] = defaultdict(list)
    groups: dict[str, list[tuple[int | None, str]]] = defaultdict(list)
    errors: list[str] = []

    def label(eid: int) -> str:
        try:
            return entity_label(f.by_id(eid))
        except Exception:  # the entity itself is not in the file
            return f"#{eid}"

    for level, message, offset in log:
        m = re.match(r"Overwriting instance with name #(\d+)", message)
        if m:
            duplicates.append(int(m.group(1)))
            continue
        m = re.match(r"Instance reference #(\d+) used by instance #(\d+) at attribute index (\d+) not found", message)
        if m:
            target, owner, index = int(m.group(1)), int(m.group(2)), int(m.group(3))
            dangling[owner].append(target)
            try:
                attr = f.by_id(owner).attribute_name(index)
            except Exception:  # unknown owner or index
                attr = f"attribute {index + 1}"
            at = f" (line {_line_and_entity(parse_path, offset)[0]})" if offset is not None else ""
            groups["dangling"].append((owner, f"{label(owner)}: {attr} refers to #{target}, which is not in the "
                                              f"file{at}; the reference is left out"))
            continue
        m = re.match(r"Expected (\d+) attribute values, found (\d+) for instance #(\d+)", message)
        if m:
            owner = int(m.group(3))
            groups["count"].append((owner, f"{label(owner)}: {m.group(2)} attribute values where the schema has "
                                           f"{m.group(1)}; the missing ones are read as unset"))
            continue
        m = re.match(r"Entity with name '([^']*)' not found in schema '([^']*)'", message)
        if m:
            token = m.group(1)
            line, entity = _line_and_entity(parse_path, offset) if offset is not None else (0, "")
            where = f"line {line}" + (f", in {entity}" if entity else "")
            if token.upper() in _BAD_NUMBER or not token.upper().startswith("IFC"):
                what = _BAD_NUMBER.get(token.upper(), "not a valid value")
                errors.append(f"{where}: the value {token} is {what}; the parser would drop it silently")
            else:
                groups["class"].append((None, f"{where}: {token} is not an entity of schema {m.group(2)}; "
                                              "the entity is left out"))
            continue
        if level == "error":
            where = ""
            if offset is not None:
                line, entity = _line_and_entity(parse_path, offset)
                where = f"line {line}" + (f", in {entity}" if entity else "") + ": "
            groups["other"].append((None, f"{where}{message}"))
    if duplicates:
        ids = sorted(set(duplicates))
        raise IfcInputError(f"{path}: entity id{'s' if len(ids) > 1 else ''} "
                            + ", ".join(f"#{i}" for i in ids[:10]) + (" ..." if len(ids) > 10 else "")
                            + " defined more than once (the parser keeps the last definition); the file is "
                            "ambiguous: fix it or export it again", entity_id=ids[0])
    if errors:
        more = f" (and {len(errors) - 3} more)" if len(errors) > 3 else ""
        raise IfcInputError(f"{path}: " + "; ".join(errors[:3]) + more)
    titles = {"dangling": "reference to a missing entity", "count": "entity with a wrong number of attributes",
              "class": "entity class not in the schema", "other": "problem reported by the IFC parser"}
    diagnostics = []
    for kind, items in groups.items():
        for eid, text in items[:_EXAMPLES]:
            diagnostics.append(Diagnostic("warning", eid, f"{path}: {text}"))
        if len(items) > _EXAMPLES:
            diagnostics.append(Diagnostic("warning", None, f"{path}: {len(items) - _EXAMPLES} more of the same kind "
                                                           f"({titles[kind]})"))
    return diagnostics, dict(dangling)


def _duplicate_global_ids(path: str, f) -> list[Diagnostic]:
    seen: dict[str, Any] = {}
    found: list[tuple[Any, Any]] = []
    try:  # the entities results and links are matched by: products (elements, structural items) and groups
        roots = f.by_type("IfcProduct") + f.by_type("IfcGroup")
    except Exception:  # a schema without them cannot happen for IFC; be safe
        return []
    for e in roots:
        gid = e.get_argument(0)
        if not gid:
            continue
        other = seen.get(gid)
        if other is None:
            seen[gid] = e
        else:
            found.append((other, e))
    out = []
    for a, b in found[:_EXAMPLES]:
        out.append(Diagnostic("warning", b.id(), f"{path}: GlobalId {a[0]} is used by both "
                                                 f"{entity_label(a, global_id=False)} and {entity_label(b, global_id=False)}; "
                                                 "GlobalIds must be unique (results are matched by them)"))
    if len(found) > _EXAMPLES:
        out.append(Diagnostic("warning", None, f"{path}: {len(found) - _EXAMPLES} more duplicate GlobalIds"))
    return out


def open_source(path: str | os.PathLike[str], *, checks: bool = True) -> Source:
    """Open an IFC file after checking it is a complete, regular file; see the module notes.

    Parameters
    ----------
    path : the IFC file (STEP, ifcZIP or ifcXML).
    checks : also scan for duplicate GlobalIds (the writer, re-opening a file
        already checked, skips it).

    Raises
    ------
    IfcInputError
        Not a regular file, unreadable, empty, not IFC, truncated, a syntax
        error (with line and entity), an entity id defined twice, a value
        that is not a number, an unsupported schema, or the file changed
        while it was read.
    """
    import ifcopenshell

    path = os.fspath(path)
    st = check_regular(path)
    if not os.access(path, os.R_OK):
        raise IfcInputError(f"{path}: cannot be read (permission denied)")
    # the modules the command needs next are imported while the file is read and parsed (analysis.warm_imports)
    warm = contextlib.ExitStack()
    warm.enter_context(while_parsing(path))
    scan = None
    try:
        scan = _read_through(path, st)
        kind = _check_kind(path, scan)
        if kind == "step":
            _check_complete(path, scan)
        parse_path = scan.copy or path
        _take_log()  # start with an empty log
        try:
            try:
                f = ifcopenshell.open(parse_path) if scan.copy is None else ifcopenshell.open(parse_path, format=".ifc")
            finally:
                warm.close()
        except Exception as exc:  # ifcopenshell raises several types for unreadable files
            log = _parse_log(_take_log())
            message = _schema_message(path, exc)
            if message is None:
                message = _syntax_message(path, parse_path, len(_BOM) if scan.bom else 0, exc, log)
            raise IfcInputError(message) from None
        log = _parse_log(_take_log())
        diagnostics, dangling = _findings(path, parse_path, len(_BOM) if scan.bom else 0, f, log)
    finally:
        warm.close()  # (closed already where the parser ran)
        if scan is not None and scan.copy:
            _remove(scan.copy)
    try:
        after = os.stat(path)
    except OSError as exc:
        raise IfcInputError(f"{path}: cannot be read ({exc.strerror or exc})") from None
    if not _same(after, st):
        raise IfcInputError(f"{path}: changed while it was being read (saved again?); try again when it is saved")
    if f.schema not in SUPPORTED_SCHEMAS and not f.schema.startswith("IFC4X3"):
        raise IfcInputError(_schema_message(path, RuntimeError(f"Unsupported schema: {f.schema}")) or
                            f"{path}: schema {f.schema} is not supported")
    if scan.bom:
        diagnostics.append(Diagnostic("info", None, f"{path}: starts with a UTF-8 byte-order mark; read through it "
                                                    "(the file is left as it is)"))
    if checks:
        diagnostics += _duplicate_global_ids(path, f)
    with contextlib.suppress(TypeError):
        _DANGLING[f] = dangling
    _FINDINGS[os.path.abspath(path)] = [d.message for d in diagnostics if d.level == "warning"]
    return Source(f, _stamp_of(path, st, scan.sha256), diagnostics, dangling)


def verify_unchanged(path: str | os.PathLike[str], stamp: SourceStamp, now: SourceStamp | None = None) -> None:
    """IfcInputError unless ``path`` still holds the bytes ``stamp`` was taken from."""
    path = os.fspath(path)
    if now is None:
        st = check_regular(path)
        now = _stamp_of(path, st, _read_through(path, st).sha256)
    if now.sha256 != stamp.sha256:
        raise _changed_since_read(path)


def read_unchanged(path: str, sha256: str) -> bytes:
    """The bytes of ``path``; IfcInputError unless they are still those whose SHA-256 is ``sha256``."""
    with open(path, "rb") as fh:
        data = fh.read()
    if hashlib.sha256(data).hexdigest() != sha256:
        raise _changed_since_read(path)
    return data


def _changed_since_read(path: str) -> IfcInputError:
    return IfcInputError(f"{path}: the input file changed on disk after it was read (saved again during the run?); "
                         "the results belong to the earlier version, so nothing was written: run the analysis again")


_READER_FAILURES = (AttributeError, TypeError, IndexError, KeyError, ValueError, ZeroDivisionError,
                    RuntimeError)  # ifcopenshell: RuntimeError for an attribute holding an entity of the wrong class


def broken_file_guard(read: Callable, path: str) -> Callable:
    """``read`` whose failures on a file the IFC parser found broken become an `IfcInputError` (exit 2 on the command line).

    A reader meets a dangling reference or a missing attribute as None where
    an entity should be (AttributeError, TypeError ...). When the parser
    reported such defects for ``path``, that failure is the file's, and the
    message names the defects; otherwise it stays an internal error (a bug).
    """

    def guarded(*args, **kwargs):
        try:
            return read(*args, **kwargs)
        except _READER_FAILURES as exc:
            findings = parser_findings(path) or _schema_findings(path)
            if not findings:
                raise
            more = f" (and {len(findings) - 2} more)" if len(findings) > 2 else ""
            raise IfcInputError(f"{path}: cannot be read as a model because the file is broken: "
                                + "; ".join(findings[:2]) + more
                                + f" [the reader stopped at: {type(exc).__name__}: {exc}]") from exc

    return guarded


def _schema_findings(path: str, limit_bytes: int = 100_000_000) -> list[str]:
    """Attribute values of the wrong type (a reference to an entity of another class ...) by ifcopenshell.validate.

    Run only after the reader failed, and on files up to ``limit_bytes``
    (the check is per entity in Python).
    """
    try:
        if os.path.getsize(path) > limit_bytes:
            return []
        import ifcopenshell
        import ifcopenshell.validate

        logger = ifcopenshell.validate.json_logger()
        ifcopenshell.validate.validate(ifcopenshell.open(path), logger)
    except Exception:  # the check is a help for the message only
        return []
    out = []
    for st in logger.statements:
        if st.get("level") != "error":
            continue
        instance = str(st.get("instance", "")).split("=", 1)
        attr = st.get("attribute")
        value = [line.strip() for line in str(st.get("message", "")).splitlines() if line.strip()]
        shown = value[value.index("Value:") + 1] if "Value:" in value and value.index("Value:") + 1 < len(value) else ""
        head = instance[0] + (" " + instance[1].split("(", 1)[0] if len(instance) > 1 else "")
        out.append(f"{head}: attribute {attr} holds an invalid value {shown}".rstrip())
    return out
