"""Text shown on the HTML map: escaping and number formatting with units.

Every string that reaches a tooltip, a label or the panel comes from users' files (ids, notes,
site names) and is shown, never run. folium does not protect it: its GeoJSON tooltips put
property values into ``innerHTML``, its plain tooltips and popups paste text into a JavaScript
template literal, and branca reads rendered scripts again as Jinja templates.
:func:`escape_text` therefore HTML-escapes, turns the three characters that are live inside a
template literal (`` ` ``, ``$``, ``\\``) into entities, and the braces too, so that no text
can open a Jinja ``{{ }}``, ``{% %}`` or ``{# #}``.
"""

from __future__ import annotations

import html
import math
import re
from collections.abc import Iterable

import numpy as np
import pandas as pd

#: Shown for a missing value.
MISSING = "–"

_TEMPLATE_LITERAL = str.maketrans(
    {"`": "&#96;", "$": "&#36;", "\\": "&#92;", "{": "&#123;", "}": "&#125;"}
)


def escape_text(value: object) -> str:
    """Text safe to show as HTML, in an attribute, or inside a JavaScript template literal.

    ``None`` and NaN give ``""``; anything else is turned into ``str`` first.

    Examples
    --------
    >>> escape_text("<img src=x onerror=alert(1)>")
    '&lt;img src=x onerror=alert(1)&gt;'
    >>> escape_text("${alert(1)}`\\\\")
    '&#36;&#123;alert(1)&#125;&#96;&#92;'
    >>> escape_text(None), escape_text(float("nan")), escape_text(3)
    ('', '', '3')
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    return html.escape(str(value), quote=True).translate(_TEMPLATE_LITERAL)


_SPECIAL = re.compile(r"[&<>\"'`$\\{}]")


def escape_all(values: Iterable[object]) -> list[str]:
    """:func:`escape_text` of each value (quicker for the many that need no escape)."""
    values = values.tolist() if hasattr(values, "tolist") else list(values)
    try:
        if _SPECIAL.search("".join(values)) is None:  # all text, nothing to escape
            return values
    except TypeError:  # not all text: one by one
        pass
    out = []
    for v in values:
        if isinstance(v, str) and _SPECIAL.search(v) is None:
            out.append(v)
        else:
            out.append(escape_text(v))
    return out


def fmt_number(values, decimals: int, unit: str = "", *, scale: float = 1.0) -> list[str]:
    """Numbers as text with a unit; ``MISSING`` for NaN.

    Parameters
    ----------
    values : array-like of float
    decimals : int
        Digits after the decimal point.
    unit : str
        Unit appended after a space (``%`` too, per SI usage); none if empty.
    scale : float
        Factor applied first, e.g. 100 to show a fraction in %.

    Examples
    --------
    >>> fmt_number([0.873, float("nan")], 0, "%", scale=100)
    ['87 %', '–']
    >>> fmt_number([1234.5], 0, "m")
    ['1,234 m']
    """
    v = pd.to_numeric(pd.Series(values), errors="coerce").to_numpy(dtype=float) * scale
    suffix = f" {unit}" if unit else ""
    # each distinct value (bit for bit: -0.0 is not 0.0) is formatted once
    uniq, inverse = np.unique(v.view(np.int64), return_inverse=True)
    text = [MISSING if np.isnan(x) else f"{x:,.{decimals}f}{suffix}" for x in uniq.view(np.float64)]
    return np.asarray(text, dtype=object)[inverse.reshape(-1)].tolist()


def join_limited(items: Iterable[object], limit: int = 8, sep: str = ", ") -> str:
    """Join at most ``limit`` items, then ``… (+N more)``; items are not escaped.

    Examples
    --------
    >>> join_limited(["a", "b", "c"], limit=2)
    'a, b … (+1 more)'
    """
    items = [str(i) for i in items]
    if len(items) <= limit:
        return sep.join(items)
    return sep.join(items[:limit]) + f" … (+{len(items) - limit} more)"


def ints_json(values) -> str:
    """A JSON list of integers (a list or an integer array), as ``json.dumps`` writes it
    without spaces, made with array operations: the digits of every value in one table of
    bytes, leading zeros dropped (the map's columnar data holds lists of 100,000 indices).

    Examples
    --------
    >>> ints_json([0, 7, 10, 1234, 99]), ints_json([]), ints_json([-3, 12])
    ('[0,7,10,1234,99]', '[]', '[-3,12]')
    """
    a = np.asarray(values, dtype=np.int64).reshape(-1)
    if len(a) == 0:
        return "[]"
    if a.min() < 0:  # signs: not worth a table
        return "[" + ",".join(map(str, a.tolist())) + "]"
    top = int(a.max())
    width = len(str(top))
    b = a.astype(np.uint32 if top < 2**32 else np.uint64)
    table = np.empty((width + 1, len(a)), dtype=np.uint8)  # a value's bytes down a column
    table[width] = ord(",")
    for j in range(width - 1, -1, -1):  # the last digit first
        q = b // 10
        table[j] = b - q * 10 + ord("0")
        b = q
    keep = np.ones(table.shape, dtype=bool)
    powers = 10 ** np.arange(width - 1, 0, -1, dtype=np.int64)
    keep[: width - 1] = a >= powers[:, None]  # a digit, not a leading zero
    return "[" + table.T[keep.T].tobytes()[:-1].decode("ascii") + "]"
