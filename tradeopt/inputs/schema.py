"""Field-by-field validation shared by the CSV catalogs and the TOML files.

A :class:`Field` says what one column or key must hold; :func:`convert` turns a
raw value into a Python value or raises :class:`InputError` naming the file,
the row or key, and what was expected.
"""
from __future__ import annotations

import difflib
import math
import os
import re
import stat
from dataclasses import dataclass
from typing import Any

from .errors import InputError

__all__ = ["Field", "convert", "check_known", "read_toml", "read_input_bytes", "MISSING", "TOML_MAX_BYTES",
           "INT64_MAX"]

MISSING = object()

#: Largest scenario or link file read [byte] (4 MiB; such files are a few kB).
TOML_MAX_BYTES = 4 * 1024 * 1024
#: Largest integer an ``"int"`` field accepts (a signed 64-bit integer) [-].
INT64_MAX = 2**63 - 1

#: A plain decimal number as written in a CSV cell (no underscores, no hex; ``nan``/``inf`` are
#: caught separately as non-finite).
_NUMBER_TEXT = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?|[+-]?(?:nan|inf|infinity)", re.IGNORECASE)


@dataclass(frozen=True)
class Field:
    """What one catalog column or file key must hold.

    Parameters
    ----------
    name : str
        Column or key name, with its unit.
    kind : str
        ``"float"``, ``"int"``, ``"str"``, ``"bool"``, ``"choice"`` or ``"str_list"``.
    required : bool
        Whether it must be present and non-empty.
    low, high : float, optional
        Closed bounds for numbers (``low_open``/``high_open`` make them open).
    choices : tuple of str
        Allowed values for ``"choice"`` (and items of ``"str_list"`` when given).
    default : object
        Value used when absent and not required.
    unit : str
        Unit shown in messages.
    """

    name: str
    kind: str = "float"
    required: bool = True
    low: float | None = None
    high: float | None = None
    low_open: bool = False
    high_open: bool = False
    choices: tuple = ()
    default: Any = None
    unit: str = ""

    def expectation(self) -> str:
        """Plain description of what the field must hold."""
        if self.kind in ("float", "int"):
            noun = "an integer" if self.kind == "int" else "a number"
            lo = hi = ""
            if self.low is not None:
                lo = f"{'>' if self.low_open else '>='} {self.low:g}"
            if self.high is not None:
                hi = f"{'<' if self.high_open else '<='} {self.high:g}"
            bounds = " and ".join(b for b in (lo, hi) if b)
            unit = f" {self.unit}" if self.unit else ""
            return f"{noun}{unit}" + (f" {bounds}" if bounds else "")
        if self.kind == "choice":
            return "one of " + ", ".join(repr(c) for c in self.choices)
        if self.kind == "bool":
            return "true or false"
        if self.kind == "float_list":
            return "a list of numbers" + (f" in {self.unit}" if self.unit else "")
        if self.kind == "str_list":
            return "a list of names" + (" from " + ", ".join(repr(c) for c in self.choices) if self.choices else "")
        return "a non-empty text"


class _Shown(str):
    """Text shown as is in a message (not quoted)."""

    def __repr__(self) -> str:
        return str(self)


def _short_int(value: int) -> _Shown:
    """A huge integer for a message: its first digits and its length, never thousands of digits."""
    magnitude = abs(value)
    if magnitude.bit_length() <= 64:
        return _Shown(f"{value}")
    digits = math.floor(magnitude.bit_length() * math.log10(2)) + 1  # the digit count or one more
    if magnitude < 10 ** (digits - 1):
        digits -= 1
    return _Shown(f"{'a negative' if value < 0 else 'an'} integer of {digits} digits")


def _fail(field: Field, value, file, where, detail: str = "") -> InputError:
    shown = repr(value) if not isinstance(value, float) else f"{value:g}"
    extra = f" ({detail})" if detail else ""
    return InputError(f"expected {field.expectation()}, got {shown}{extra}", file=file, where=where)


def _close_match(value: str, choices, cutoff: float = 0.6) -> str | None:
    """The choice ``value`` most likely meant (case first, then spelling)."""
    choices = [str(c) for c in choices]
    for c in choices:
        if c.casefold() == value.casefold():
            return c
    hint = difflib.get_close_matches(value, choices, n=1, cutoff=cutoff)
    return hint[0] if hint else None


def convert(raw, field: Field, *, file: str | None, where: str, typed: bool = False):
    """Convert and check one value.

    Parameters
    ----------
    raw : object
        The value as read (a CSV cell is a string; a TOML value has its TOML type).
        Use :data:`MISSING` when the key or cell is absent or empty.
    field : Field
        What it must hold.
    file : str or None
        File name for the message.
    where : str
        Row/column or key for the message.
    typed : bool, optional
        The value comes from a typed format (TOML): a quoted text is then
        rejected where a number or true/false is expected, instead of parsed.

    Returns
    -------
    value : object
        The converted value, or ``field.default`` when absent and optional.

    Raises
    ------
    InputError
        Missing, wrong type, non-finite, or out of range.
    """
    if raw is MISSING or (isinstance(raw, str) and raw.strip() == ""):
        if field.required:
            raise InputError(f"missing; expected {field.expectation()}", file=file, where=where)
        return field.default
    kind = field.kind
    if kind in ("float", "int"):
        if isinstance(raw, bool):
            raise _fail(field, raw, file, where)
        if isinstance(raw, str):
            text = raw.strip()
            if typed:
                raise _fail(field, raw, file, where, "a quoted text; write the number without quotes")
            if not _NUMBER_TEXT.fullmatch(text):
                raise _fail(field, text, file, where)
            value = float(text)
        elif isinstance(raw, int):
            # TOML integers have no size limit: one beyond 64 bits is never a meant value (and one
            # beyond about 1e308 does not fit a float at all).
            if kind == "int" and not -INT64_MAX - 1 <= raw <= INT64_MAX:
                raise _fail(field, _short_int(raw), file, where, "beyond the 64-bit integer range")
            try:
                value = float(raw)
            except OverflowError:
                raise _fail(field, _short_int(raw), file, where, "too large for a floating-point number") from None
        elif isinstance(raw, float):
            value = raw
        else:
            raise _fail(field, raw, file, where)
        if not math.isfinite(value):
            raise _fail(field, value, file, where, "not a finite number")
        if kind == "int":
            if value != int(value):
                raise _fail(field, value, file, where)
            value = int(value)
        if field.low is not None and (value < field.low or (field.low_open and value == field.low)):
            raise _fail(field, value, file, where)
        if field.high is not None and (value > field.high or (field.high_open and value == field.high)):
            raise _fail(field, value, file, where)
        return value
    if kind == "bool":
        if isinstance(raw, bool):
            return raw
        if isinstance(raw, str) and typed:
            raise _fail(field, raw, file, where, "a quoted text; write true or false without quotes")
        if isinstance(raw, str) and raw.strip().lower() in ("true", "false"):
            return raw.strip().lower() == "true"
        raise _fail(field, raw, file, where)
    if kind == "float_list":
        if not isinstance(raw, list) or not raw:
            raise _fail(field, raw, file, where)
        values = []
        for item in raw:
            if isinstance(item, bool) or not isinstance(item, (int, float)):
                raise _fail(field, item, file, where)
            try:
                value = float(item)
            except OverflowError:  # a TOML integer beyond about 1e308
                raise _fail(field, _short_int(item), file, where, "too large for a floating-point number") from None
            if not math.isfinite(value):
                raise _fail(field, item, file, where)
            values.append(value)
        return values
    if kind == "str_list":
        if isinstance(raw, str):
            items = [s.strip() for s in raw.replace(";", " ").split()]
        elif isinstance(raw, list) and all(isinstance(s, str) for s in raw):
            items = [s.strip() for s in raw]
        else:
            raise _fail(field, raw, file, where)
        if not items or any(not s for s in items):
            raise _fail(field, raw, file, where)
        if field.choices:
            for s in items:
                if s not in field.choices:
                    hint = _close_match(s, field.choices)
                    raise _fail(field, s, file, where, f"did you mean {hint!r}?" if hint else "")
        return items
    if not isinstance(raw, str):
        raise _fail(field, raw, file, where)
    value = raw.strip()
    if kind == "choice" and value not in field.choices:
        hint = _close_match(value, field.choices)
        raise _fail(field, value, file, where, f"did you mean {hint!r}?" if hint else "")
    return value


def check_known(names, known, *, file: str | None, where: str, what: str = "column") -> None:
    """Reject unknown names (a unit typo is an error, never ignored).

    Parameters
    ----------
    names : iterable of str
        Names present in the input.
    known : iterable of str
        Names the schema defines.
    file : str or None
        File for the message.
    where : str
        Where the names were found (e.g. ``"header"`` or ``"table [site]"``).
    what : str
        ``"column"`` or ``"key"``.
    """
    known = list(known)
    for name in names:
        if name not in known:
            hint = _close_match(name, known, cutoff=0.5)
            tip = f"; did you mean {hint!r}?" if hint else f"; expected one of: {', '.join(known)}"
            raise InputError(f"unknown {what} {name!r}{tip}", file=file, where=where)


_FILE_KINDS = ((stat.S_ISDIR, "a folder"), (stat.S_ISFIFO, "a named pipe (FIFO)"),
               (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"),
               (stat.S_ISSOCK, "a socket"))


def _not_regular(mode: int) -> str | None:
    """What a file that is not a regular file is, for the message; None for a regular file."""
    if stat.S_ISREG(mode):
        return None
    for test, noun in _FILE_KINDS:
        if test(mode):
            return noun
    return "not a regular file"


def _size_text(n_bytes: int) -> str:
    """A size [byte] as text for messages (bytes, MiB or GiB)."""
    if n_bytes >= 1024**3:
        return f"{n_bytes / 1024**3:.1f} GiB"
    if n_bytes >= 1024**2:
        return f"{n_bytes / 1024**2:.1f} MiB"
    return f"{n_bytes} bytes"


def read_input_bytes(path, *, limit_bytes: int, what: str) -> bytes:
    """Read a whole input file, refusing anything but a regular file of bounded size.

    A named pipe, a device (``/dev/zero``), a socket or a folder is refused
    before it is read, so reading never blocks and never grows without bound.
    The file is opened without blocking (``O_NONBLOCK`` where the system has
    it) and checked again on the open descriptor, then at most
    ``limit_bytes + 1`` bytes are read.

    Parameters
    ----------
    path : path
        The file (a symbolic link is followed).
    limit_bytes : int
        Largest accepted size [byte].
    what : str
        What the file should be, for the message (e.g. ``"a CSV catalog"``).

    Returns
    -------
    data : bytes
        The file's contents.

    Raises
    ------
    InputError
        Missing, unreadable, not a regular file, or larger than ``limit_bytes``.
    """
    fname = str(path)

    def refuse(message: str) -> InputError:
        return InputError(message, file=fname)

    try:
        kind = _not_regular(os.stat(path).st_mode)
        if kind is not None:
            raise refuse(f"is {kind}, not a regular file; expected {what}")
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_BINARY", 0))
    except FileNotFoundError:
        raise refuse(f"file not found; expected {what}") from None
    except OSError as exc:
        raise refuse(f"cannot be read ({exc.strerror or exc.__class__.__name__}); expected {what}") from None
    with os.fdopen(fd, "rb", closefd=True) as fh:
        try:
            st = os.fstat(fh.fileno())
            kind = _not_regular(st.st_mode)  # replaced between the two looks: check what was opened
            if kind is not None:
                raise refuse(f"is {kind}, not a regular file; expected {what}")
            if st.st_size > limit_bytes:
                raise refuse(f"is {_size_text(st.st_size)}, larger than the {_size_text(limit_bytes)} limit for "
                             f"{what}")
            data = fh.read(limit_bytes + 1)
        except OSError as exc:
            raise refuse(f"cannot be read ({exc.strerror or exc.__class__.__name__}); expected {what}") from None
    if len(data) > limit_bytes:  # grew while being read
        raise refuse(f"is larger than the {_size_text(limit_bytes)} limit for {what}")
    return data


def read_toml(path, *, what: str, expected_tables: str) -> dict:
    """Parse a TOML file; every problem becomes one :class:`InputError` naming the file.

    Only a regular file of at most :data:`TOML_MAX_BYTES` is read (see :func:`read_input_bytes`).

    Parameters
    ----------
    path : path
        The file.
    what : str
        What the file should be, for the message (e.g. ``"a TOML scenario file"``).
    expected_tables : str
        The tables an empty file lacks, for the message.
    """
    import tomllib  # noqa: PLC0415

    fname = str(path)
    raw = read_input_bytes(path, limit_bytes=TOML_MAX_BYTES, what=what)
    try:
        data = tomllib.loads(raw.decode("utf-8"))
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"is not valid TOML: {exc}", file=fname) from None
    except UnicodeDecodeError as exc:
        raise InputError(f"cannot be read ({exc.__class__.__name__}); expected UTF-8 text", file=fname) from None
    except ValueError as exc:  # Python's limit on integer digits (4300), raised outside TOMLDecodeError
        detail = "a number has too many digits" if "digits" in str(exc) else exc.__class__.__name__
        raise InputError(f"is not valid TOML ({detail})", file=fname) from None
    if not data:
        raise InputError(f"file is empty; expected {expected_tables}", file=fname)
    return data
