"""Where each key of a TOML file sits: dotted key path -> line number (for error messages).

tomllib gives values, not positions; this scan covers the forms a configuration uses
(tables, quoted table names, `key = value` lines, dotted keys; the k-th entry of an array of
tables `[[name]]` is `name` + ("#k",)).  Unknown forms map to no
line, and the error then names the key alone."""

from __future__ import annotations

import re

_TABLE = re.compile(r"^\s*\[\[?\s*([^\]]+?)\s*\]\]?\s*(#.*)?$")
_KEY = re.compile(r'^\s*((?:"[^"]*"|[A-Za-z0-9_-]+)(?:\s*\.\s*(?:"[^"]*"|[A-Za-z0-9_-]+))*)\s*=')


def _split(dotted: str) -> tuple[str, ...]:
    parts = re.findall(r'"([^"]*)"|([A-Za-z0-9_-]+)', dotted)
    return tuple(a or b for a, b in parts)


def key_lines(text: str) -> dict[tuple[str, ...], int]:
    out: dict[tuple[str, ...], int] = {}
    table: tuple[str, ...] = ()
    arrays: dict[tuple[str, ...], int] = {}     # [[name]] seen so far: the k-th is name + ("#k",)
    in_multiline = False
    for n, line in enumerate(text.splitlines(), start=1):
        if in_multiline:
            if line.count('"""') % 2 == 1 or line.count("'''") % 2 == 1:
                in_multiline = False
            continue
        m = _TABLE.match(line)
        if m:
            table = _split(m.group(1))
            out.setdefault(table, n)
            if line.lstrip().startswith("[["):
                arrays[table] = arrays.get(table, 0) + 1
                table = table + (f"#{arrays[table]}",)
                out.setdefault(table, n)
            continue
        m = _KEY.match(line)
        if m:
            out.setdefault(table + _split(m.group(1)), n)
            if line.count('"""') % 2 == 1 or line.count("'''") % 2 == 1:
                in_multiline = True
    return out
