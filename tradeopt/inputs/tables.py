"""Reading the tables of a TOML input and looking up catalog IDs, shared by link files and scenarios.

Each helper raises :class:`InputError` with the file and the table or key, so every message
stays one line naming where the problem is.
"""
from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import Any

from .errors import InputError
from .schema import MISSING, Field, _close_match, check_known, convert

__all__ = ["read_table", "read_table_array", "one_of", "lookup_rows", "check_ids", "catalog_dir"]


def _convert_all(raw: dict, fields: list[Field], *, file: str | None, where: str) -> dict[str, Any]:
    """Every field of ``fields`` converted from ``raw`` (absent keys get their defaults)."""
    check_known(raw.keys(), [f.name for f in fields], file=file, where=where, what="key")
    label = where.removeprefix("table ")
    return {f.name: convert(raw.get(f.name, MISSING), f, file=file, where=f"key {label} {f.name}", typed=True)
            for f in fields}


def read_table(data: dict, name: str, fields: list[Field], *, file: str | None) -> dict[str, Any]:
    """The table ``[name]`` of ``data``, key by key converted (an absent table: every default).

    Raises
    ------
    InputError
        Not a table, an unknown key, or a key that does not convert (the message names ``[name] key``).
    """
    raw = data.get(name, {})
    if not isinstance(raw, dict):
        raise InputError(f"expected a table [{name}], got a value", file=file, where=f"table [{name}]")
    return _convert_all(raw, fields, file=file, where=f"table [{name}]")


def read_table_array(data: dict, name: str, fields: list[Field], *, file: str | None) -> Iterator[dict[str, Any]]:
    """The tables ``[[name]]`` of ``data`` (none: nothing), one by one, each converted key by key.

    An iterator, so that a caller's checks of one table run before the next table is read.
    Messages name the table by its position, ``[[name]] #1`` for the first.
    """
    raw = data.get(name, [])
    if not isinstance(raw, list):
        raise InputError(f"expected [[{name}]] tables", file=file, where=f"table [[{name}]]")
    for i, item in enumerate(raw, start=1):
        where = f"[[{name}]] #{i}"
        if not isinstance(item, dict):
            raise InputError("expected a table", file=file, where=where)
        yield _convert_all(item, fields, file=file, where=where)


def one_of(values: dict, names: tuple[str, ...], *, file: str | None, table: str, need: bool = True) -> str | None:
    """The one key of ``names`` given (not None) in ``values``; None when none is and ``need`` is false."""
    given = [n for n in names if values.get(n) is not None]
    if len(given) > 1:
        raise InputError(f"give only one of {', '.join(names)}", file=file, where=f"table [{table}]")
    if need and not given:
        raise InputError(f"missing; give one of {', '.join(names)}", file=file, where=f"table [{table}]")
    return given[0] if given else None


def _unknown_id(value: str, known: list[str], *, what: str, file: str | None, where: str) -> InputError:
    hint = _close_match(value, known)
    tip = f"; did you mean {hint!r}?" if hint else f"; known: {', '.join(known)}"
    return InputError(f"unknown {what} {value!r}{tip}", file=file, where=where)


def lookup_rows(table, column: str, value: str, *, file: str | None, where: str, what: str):
    """The catalog rows whose ``column`` is ``value`` (a pandas DataFrame, never empty).

    Raises
    ------
    InputError
        No such ID; the message suggests the closest known ID (or lists them all).
    """
    rows = table[table[column] == value]
    if rows.empty:
        raise _unknown_id(value, sorted(set(table[column])), what=what, file=file, where=where)
    return rows


def check_ids(ids, table, column: str, *, file: str | None, where: str, what: str) -> None:
    """Every ID of ``ids`` is in ``table[column]`` (the first unknown one is reported, as by :func:`lookup_rows`)."""
    known = sorted(set(table[column]))
    for i in ids:
        if i not in known:
            raise _unknown_id(i, known, what=what, file=file, where=where)


def catalog_dir(name: str | None, base_dir: Path | None, *, file: str | None, where: str,
                relative_to: str) -> str | None:
    """The catalog folder a file names (relative to ``base_dir``), or None for the bundled catalogs.

    Raises
    ------
    InputError
        The folder does not exist (``relative_to`` names the file kind in the message).
    """
    if name is None:
        return None
    folder = str(base_dir / name) if base_dir is not None else name
    if not Path(folder).is_dir():
        raise InputError(f"catalog folder {folder!r} not found; expected a folder of CSV catalogs (relative to "
                         f"{relative_to})", file=file, where=where)
    return folder
