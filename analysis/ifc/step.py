"""Bulk STEP (ISO 10303-21) text for the results writer.

Creating hundreds of thousands of result entities one ``create_entity`` call
at a time costs more than writing the whole file; the results of a large
model are therefore formatted here as STEP lines, numbered after the file's
highest entity id, and appended to the DATA section of the file that
ifcopenshell wrote (`append_data`). Attribute order comes from the schema
(`EntityTemplates`), so one table serves IFC2X3, IFC4 and IFC4X3.

Numbers are written with `SIGNIFICANT_DIGITS` significant digits (relative
rounding below 5e-13, far inside any engineering use; the results JSON keeps
every double exactly).
"""
from __future__ import annotations

import base64
import os
import re
from typing import Any, Iterable

import numpy as np

__all__ = ["SIGNIFICANT_DIGITS", "real", "reals", "string", "ref", "refs", "enum", "new_guids", "EntityTemplates",
           "StepLines", "append_data", "splice_data"]

#: Significant digits of every number the bulk writer formats.
SIGNIFICANT_DIGITS = 12
_PCT = f"%.{SIGNIFICANT_DIGITS}g,"  # the same format for one %-operation over many values (faster than map)


def real(x: float) -> str:
    """A STEP REAL for a finite float (``$`` for NaN or infinity): ``1.``, ``-2.5``, ``1.E-13`` (as `reals`)."""
    return reals(np.array([float(x)]))[0]


def reals(values: Any) -> list[str]:
    """A STEP REAL of every value of an array (flattened, C order), formatted in one pass.

    Each value is rounded to `SIGNIFICANT_DIGITS` significant digits as a
    decimal, and the double nearest that decimal is written in its shortest
    round-trip form (orjson): the same decimal as ``%.12g`` gives, at a tenth
    of the cost. The rounding is ``rint(x * 10**k) / 10**k`` with an exact
    power of ten, so the result is the double nearest an integer of twelve
    digits times 10**-k (one IEEE division, correctly rounded), whose
    shortest form has at most twelve digits; it can differ from ``%.12g`` by
    one unit in the twelfth digit where x * 10**k lands within an ulp of a
    half. Values outside 1e-11 to 1e34 in magnitude (k beyond the exact
    powers of ten) are formatted with ``%.12g``.
    """
    flat = np.asarray(values, dtype=float).ravel()
    if flat.size == 0:
        return []
    try:
        import orjson
    except ImportError:  # pragma: no cover - orjson is a dependency
        return _reals_printf(flat)
    a = np.abs(flat)
    with np.errstate(divide="ignore", invalid="ignore"):
        k = (SIGNIFICANT_DIGITS - 1) - np.floor(np.log10(a))  # 10**k scales |x| to twelve integer digits
    fast = np.isfinite(flat) & (a > 0)
    fast[fast] = np.abs(k[fast]) <= 21  # an exact power of ten also after a correction by one
    x, kf = flat[fast], k[fast]
    n, p, up = _scaled(x, kf)
    # log10 may miss the exponent by one near a power of ten (and rint may carry to 10**12): correct once
    kf = kf - (np.abs(n) >= 10.0 ** SIGNIFICANT_DIGITS) + (np.abs(n) < 10.0 ** (SIGNIFICANT_DIGITS - 1))
    n, p, up = _scaled(x, kf)
    rounded = flat.copy()
    rounded[fast] = np.where(up, n / p, n * p)
    rounded[flat == 0] = 0.0  # -0.0 too
    text = "," + orjson.dumps(rounded, option=orjson.OPT_SERIALIZE_NUMPY).decode("ascii")[1:-1] + ","
    # to STEP: null (orjson's NaN and infinity) -> $; 1e-7 -> 1.E-7; 100.0 -> 100.
    text = text.replace("null", "$").replace(".0,", ".,")
    if "e" in text:
        text = _NO_POINT.sub(r"\1.E", text.replace("e", "E"))
    tokens = text[1:-1].split(",")
    rest = np.flatnonzero(~fast & np.isfinite(flat) & (flat != 0))
    if rest.size:
        for i, t in zip(rest.tolist(), _reals_printf(flat[rest])):
            tokens[i] = t
    return tokens


def _scaled(x: np.ndarray, k: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """rint(x * 10**k) (an integer of twelve digits when k is right), 10**|k| and whether k >= 0."""
    up = k >= 0
    p = 10.0 ** np.abs(k)  # exact for |k| <= 22
    return np.rint(np.where(up, x * p, x / p)), p, up


_NO_POINT = re.compile(r"(,-?[0-9]+)E")  # a mantissa without a decimal point


def _reals_printf(flat: np.ndarray) -> list[str]:
    """`reals` through ``%.12g`` (one %-operation over all values)."""
    tokens = ((_PCT * flat.size) % tuple(flat.tolist()))[:-1].replace("e", "E").split(",")
    return [t if "." in t else _fix(t) for t in tokens]


def _fix(t: str) -> str:
    """A %g token without a decimal point as a STEP REAL: 12 -> 12., 1E-13 -> 1.E-13, nan -> $."""
    if "n" in t:  # nan, inf
        return "$"
    if "E" in t:
        m, e = t.split("E")
        return f"{m}.E{e}"
    return "0." if t == "-0" else t + "."


_IFC_B64 = bytes.maketrans(b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/",
                           b"0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz_$")


def new_guids(n: int) -> list[str]:
    """``n`` new random IFC GlobalIds (UUID version 4, the 22-character IFC encoding), in one batch."""
    if n <= 0:
        return []
    raw = np.zeros((n, 18), np.uint8)
    raw[:, 2:] = np.frombuffer(os.urandom(16 * n), np.uint8).reshape(n, 16)
    raw[:, 8] = (raw[:, 8] & 0x0F) | 0x40  # version 4
    raw[:, 10] = (raw[:, 10] & 0x3F) | 0x80  # RFC 4122 variant
    text = base64.b64encode(raw.tobytes()).translate(_IFC_B64).decode("ascii")
    return [text[k + 2:k + 24] for k in range(0, 24 * n, 24)]


def string(s: Any) -> str:
    """A STEP string literal (``$`` for None); non-ASCII characters as ``\\X2\\...\\X0\\``."""
    if s is None:
        return "$"
    s = str(s)
    if s.isascii() and s.isprintable() and "'" not in s and "\\" not in s:
        return f"'{s}'"
    out = []
    wide: list[str] = []

    def flush() -> None:
        if wide:
            hexes = "".join(f"{u:04X}" for ch in wide for u in _utf16(ch))
            out.append(f"\\X2\\{hexes}\\X0\\")
            wide.clear()

    for ch in s:
        o = ord(ch)
        if 0x20 <= o < 0x7F:
            flush()
            out.append("''" if ch == "'" else ("\\\\" if ch == "\\" else ch))
        else:
            wide.append(ch)
    flush()
    return "'" + "".join(out) + "'"


def _utf16(ch: str) -> list[int]:
    b = ch.encode("utf-16-be")
    return [int.from_bytes(b[k:k + 2], "big") for k in range(0, len(b), 2)]


def ref(eid: int | None) -> str:
    return "$" if eid is None else f"#{eid}"


def refs(ids: Iterable[int]) -> str:
    return "(" + ",".join(f"#{i}" for i in ids) + ")"


def enum(name: str | None) -> str:
    return "$" if name is None else f".{name}."


class EntityTemplates:
    """Per IFC class of a schema: its attribute names in order, for formatting lines by keyword."""

    def __init__(self, schema: str) -> None:
        import ifcopenshell.ifcopenshell_wrapper as w

        self._schema = w.schema_by_name(schema)
        self._cache: dict[str, tuple[str, tuple[str, ...], tuple[bool, ...]]] = {}

    def attributes(self, ifc_class: str) -> tuple[str, tuple[str, ...], tuple[bool, ...]]:
        """(upper-case class name, attribute names, derived flags) of ``ifc_class``."""
        hit = self._cache.get(ifc_class)
        if hit is None:
            decl: Any = self._schema.declaration_by_name(ifc_class)
            names = tuple(a.name() for a in decl.all_attributes())
            hit = (decl.name().upper(), names, tuple(decl.derived()))
            self._cache[ifc_class] = hit
        return hit

    def has(self, ifc_class: str) -> bool:
        try:
            self._schema.declaration_by_name(ifc_class)
        except Exception:  # ifcopenshell raises its own error type for an unknown name
            return False
        return True

    def body(self, ifc_class: str, values: dict[str, str]) -> str:
        """``IFCCLASS(a,b,...)`` from already formatted attribute values (missing: ``$``)."""
        upper, names, derived = self.attributes(ifc_class)
        unknown = set(values) - set(names)
        if unknown:
            raise ValueError(f"{ifc_class} has no attribute {sorted(unknown)[0]!r}")
        parts = ["*" if d else values.get(n, "$") for n, d in zip(names, derived)]
        return f"{upper}({','.join(parts)})"


class StepLines:
    """Numbered DATA lines after ``first_id``; `add` returns the id of the new entity.

    ``lines`` holds complete lines (str) and deferred pieces: objects whose
    ``chunks()`` give the text (str or bytes) of ids handed out by `block`
    (see `later`).
    """

    def __init__(self, first_id: int) -> None:
        self.first_id = first_id
        self.next_id = first_id
        self.lines: list[Any] = []

    def add(self, body: str) -> int:
        eid = self.next_id
        self.next_id += 1
        self.lines.append(f"#{eid}={body};\n")
        return eid

    def block(self, n: int) -> int:
        """The first of ``n`` consecutive ids for lines added later with `extend` or `later`."""
        first = self.next_id
        self.next_id += n
        return first

    def extend(self, lines: list[str]) -> None:
        """Complete lines (``#id=BODY;\\n``) for ids handed out by `block` or `reserve`."""
        self.lines.extend(lines)

    def later(self, piece: Any) -> None:
        """Lines made when the file is written: ``piece.chunks()`` gives their text (ids from `block`)."""
        self.lines.append(piece)

    def reserve(self) -> int:
        """An id for an entity whose line is written later with `put`."""
        eid = self.next_id
        self.next_id += 1
        return eid

    def put(self, eid: int, body: str) -> None:
        self.lines.append(f"#{eid}={body};\n")

    def __len__(self) -> int:
        """The entities written or handed out so far."""
        return self.next_id - self.first_id


_TAIL = 4096


def append_data(path: str, chunks: Iterable[str]) -> None:
    """Insert ``chunks`` (DATA lines) before the closing ``ENDSEC;`` of the DATA section of a STEP file."""
    with open(path, "r+b") as fh:
        fh.seek(0, os.SEEK_END)
        size = fh.tell()
        start = max(0, size - _TAIL)
        fh.seek(start)
        tail = fh.read()
        at = tail.rfind(b"ENDSEC;")
        if at < 0 or b"END-ISO-10303-21" not in tail[at:]:
            raise ValueError(f"{path}: no DATA section end found")
        rest = tail[at:]
        fh.seek(start + at)
        fh.truncate()
        _write_chunks(fh, chunks)
        fh.write(rest)


def _write_chunks(fh, chunks: Iterable[Any]) -> None:
    """ASCII text pieces (and deferred pieces, see `StepLines.later`) to a binary file, in writes of a few MB."""
    buf: list[str] = []
    n = 0
    for chunk in chunks:
        if not isinstance(chunk, str):  # a deferred piece (`StepLines.later`)
            if buf:
                fh.write("".join(buf).encode("ascii"))
                buf, n = [], 0
            for part in chunk.chunks():
                fh.write(part if isinstance(part, bytes) else part.encode("ascii"))
            continue
        buf.append(chunk)
        n += len(chunk)
        if n > 1 << 22:
            fh.write("".join(buf).encode("ascii"))
            buf, n = [], 0
    if buf:
        fh.write("".join(buf).encode("ascii"))


def _record_span(data: bytes, eid: int, ifc_class: str) -> tuple[int, int] | None:
    """Byte span of entity ``#eid`` (of class ``ifc_class``) in a STEP file's text, or None where unsure."""
    name = b"#%d" % eid
    found = []
    at = data.find(name)
    while at >= 0:  # every '#eid' that starts a record: after a ';', a blank or the file's start, before '='
        if at == 0 or data[at - 1:at] in _BEFORE_RECORD:
            m = _RECORD_HEAD.match(data, at + len(name))
            if m is not None and m.group(1).upper() == ifc_class.upper().encode("ascii"):
                found.append((at, m))
        at = data.find(name, at + len(name))
    if len(found) != 1:  # not there, or also inside a string: leave it to ifcopenshell's own writer
        return None
    start, m = found[0]
    tail = _RECORD_TAIL.match(data, m.end())
    if tail is None:
        return None
    return start, tail.end()


_BEFORE_RECORD = (b";", b" ", b"\t", b"\r", b"\n")
_RECORD_HEAD = re.compile(rb"\s*=\s*([A-Za-z0-9_]+)\s*\(")
_RECORD_TAIL = re.compile(rb"(?:[^';]+|'[^']*')*;")


def splice_data(out_path: str, source: bytes, replace: dict[int, tuple[str, str]], chunks: Iterable[str]) -> bool:
    """Write ``source`` (a STEP file's bytes) to ``out_path`` with entities replaced and DATA lines added.

    ``replace`` maps an entity id to ``(IFC class, its new STEP record)``;
    ``chunks`` are DATA lines inserted before the closing ``ENDSEC;`` of the
    DATA section. The rest of the file, its header included, is copied byte
    for byte. Returns False, writing nothing, where the text cannot be
    spliced with certainty (the caller then writes the file through
    ifcopenshell).
    """
    end = source.rfind(b"END-ISO-10303-21")
    at = source.rfind(b"ENDSEC;", 0, end) if end >= 0 else -1
    if at < 0 or source.rfind(b"DATA;", 0, at) < 0:
        return False
    spans = []
    for eid, (ifc_class, record) in replace.items():
        span = _record_span(source, eid, ifc_class)
        if span is None or span[1] > at:
            return False
        spans.append((span, record))
    spans.sort()
    with open(out_path, "wb") as fh:
        pos = 0
        for (a, b), record in spans:
            fh.write(source[pos:a])
            fh.write(record.encode("ascii"))
            pos = b
        fh.write(source[pos:at])
        if source[at - 1:at] != b"\n":
            fh.write(b"\n")
        _write_chunks(fh, chunks)
        fh.write(source[at:])
    return True
