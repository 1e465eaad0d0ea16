"""Escaping of user-provided text for every context it can land in on the map page.

Station ids, unit names, fault names and any other attribute come from the user's
files and are treated as untrusted: a shared ``map.html`` must not run anything
that such a string spells.  Each function below escapes for exactly one context;
use the one that matches where the text lands.

==========================  ================================================
context                     function
==========================  ================================================
HTML text (``<p>x</p>``)    :func:`html_text`
HTML attribute (quoted)     :func:`html_attr`
JS string / template        :func:`js_string` (a complete literal)
inline ``<script>`` JSON    :func:`script_json`
SVG / XML text              :func:`svg_text`
SVG / XML attribute         :func:`svg_attr`
element ``id``              :func:`dom_ids` (a reversible token, no escaping
                            needed afterwards)
colour from a file          :func:`css_colours` (validated, never passed raw)
==========================  ================================================

The rules follow the HTML Living Standard (WHATWG), sections "Writing HTML
documents" (character references) and "Restrictions for contents of script
elements", and ECMAScript 2019 (JSON superset: U+2028 and U+2029 are legal in
string literals, but escaping them keeps older engines safe too).
"""

from __future__ import annotations

import json
import re
from typing import Any, Iterable

import numpy as np
import pandas as pd

__all__ = [
    "html_text",
    "html_attr",
    "js_string",
    "script_json",
    "script_json_text",
    "svg_text",
    "svg_attr",
    "dom_ids",
    "decode_dom_id",
    "css_colours",
]

# Characters that change meaning in HTML text or in a quoted attribute value.
_HTML_MAP = {
    ord("&"): "&amp;",
    ord("<"): "&lt;",
    ord(">"): "&gt;",
    ord('"'): "&quot;",
    ord("'"): "&#39;",
    ord("`"): "&#96;",
    0: "\ufffd",  # NUL is a parse error in HTML; the parser would replace it anyway
}

# XML 1.0 (Fifth Edition), production [2] Char: anything else is not allowed at all.
_XML_ILLEGAL = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff\ud800-\udfff]")
_XML_MAP = {
    ord("&"): "&amp;",
    ord("<"): "&lt;",
    ord(">"): "&gt;",
    ord('"'): "&quot;",
    ord("'"): "&#39;",
}

# Inside a JS literal: quotes of every kind, the template-substitution dollar,
# markup characters (so "</script>" or "<!--" can never appear), line separators.
_JS_MAP = {c: f"\\u{c:04x}" for c in map(ord, "\"'`$<>&")}
_JS_MAP.update({c: f"\\u{c:04x}" for c in list(range(0x20)) + [0x7F, 0x2028, 0x2029]})
_JS_MAP[ord("\\")] = "\\\\"
_SURROGATE = re.compile("[\ud800-\udfff]")

# In JSON placed inside <script type="application/json">: '<', '>', '&' cannot appear
# outside strings in JSON, so replacing them everywhere is exact.
_JSON_SCRIPT_MAP = {
    ord("<"): "\\u003c",
    ord(">"): "\\u003e",
    ord("&"): "\\u0026",
    0x2028: "\\u2028",
    0x2029: "\\u2029",
}


def _text(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, float) and value != value:  # NaN
        return ""
    return str(value)


def html_text(value: Any) -> str:
    """Escape ``value`` for HTML text content.

    ``&``, ``<``, ``>`` and both quotes become character references, so the
    result is also valid inside a double- or single-quoted attribute.

    >>> html_text('<img src=x onerror="alert(1)">')
    '&lt;img src=x onerror=&quot;alert(1)&quot;&gt;'
    >>> html_text(None)
    ''
    """
    return _text(value).translate(_HTML_MAP)


def html_attr(value: Any) -> str:
    """Escape ``value`` for a *quoted* HTML attribute value (``title="..."``).

    Never use the result in an unquoted attribute, in an ``on*`` handler or in a
    ``href``/``src`` (a ``javascript:`` URL would still run); the page puts user
    text only in text content, ``title`` and ``data-*`` attributes.

    >>> html_attr("a\\"b'c`d")
    'a&quot;b&#39;c&#96;d'
    """
    return _text(value).translate(_HTML_MAP)


def js_string(value: Any) -> str:
    """Return a complete JavaScript string literal (with its double quotes) for ``value``.

    Backslash, quotes of all three kinds, ``$``, ``<``, ``>``, ``&``, control
    characters and U+2028/U+2029 are written as escapes, so the literal means the
    same thing pasted into ``"..."``, ``'...'`` or a template literal
    (`` `...${x}...` ``: ``\\u0024{`` does not start a substitution), and it can
    never close an inline ``<script>``.  It is also valid JSON.

    >>> js_string("</script>${x}`")
    '"\\\\u003c/script\\\\u003e\\\\u0024{x}\\\\u0060"'
    """
    body = _text(value).translate(_JS_MAP)
    body = _SURROGATE.sub(lambda m: f"\\u{ord(m.group(0)):04x}", body)
    return '"' + body + '"'


def script_json(obj: Any) -> str:
    """Serialise ``obj`` as JSON safe to place inside ``<script type="application/json">``.

    ``<``, ``>``, ``&``, U+2028 and U+2029 are written as ``\\u003c`` etc., so no
    ``</script>`` or ``<!--`` can appear; NaN and infinities are refused (write
    ``None`` for a missing value).

    >>> script_json({"id": "</script>"})
    '{"id":"\\\\u003c/script\\\\u003e"}'
    """
    text = json.dumps(obj, ensure_ascii=False, allow_nan=False, separators=(",", ":"))
    return text.translate(_JSON_SCRIPT_MAP)


def script_json_text(text: str) -> str:
    """Make already-serialised JSON text safe for a ``<script>`` block (as :func:`script_json`).

    >>> script_json_text('["a</b>"]')
    '["a\\\\u003c/b\\\\u003e"]'
    """
    return text.translate(_JSON_SCRIPT_MAP)


def svg_text(value: Any) -> str:
    """Escape ``value`` for SVG (XML) text content.

    Valid both in an SVG inlined in HTML and in a standalone ``.svg`` file:
    markup characters become references and characters that XML 1.0 forbids
    (C0 controls other than tab, newline, return; lone surrogates) become U+FFFD.

    >>> svg_text("moho <b>&")
    'moho &lt;b&gt;&amp;'
    """
    return _XML_ILLEGAL.sub("\ufffd", _text(value)).translate(_XML_MAP)


def svg_attr(value: Any) -> str:
    """Escape ``value`` for a quoted SVG (XML) attribute value.

    As :func:`svg_text`; tab, newline and carriage return are written as
    references so that XML attribute-value normalisation keeps them.

    >>> svg_attr('a"b\\nc')
    'a&quot;b&#10;c'
    """
    return svg_text(value).replace("\t", "&#9;").replace("\n", "&#10;").replace("\r", "&#13;")


_ID_SAFE = re.compile(r"[A-Za-z0-9-]+")
_ID_UNSAFE = re.compile(r"[^A-Za-z0-9-]")


def _encode_char(m: re.Match) -> str:
    return "".join(f"_{b:02x}" for b in m.group(0).encode("utf-8", "surrogatepass"))


def dom_ids(prefix: str, values: Iterable[Any]) -> np.ndarray:
    """Stable, unique element ids such as ``st-S001`` for a column of raw ids.

    Letters, digits and ``-`` are kept; every other character (``_`` included)
    becomes ``_xx`` per UTF-8 byte, so the token is reversible
    (:func:`decode_dom_id`), matches ``[A-Za-z0-9_-]+`` and is safe as an HTML
    ``id``, in a CSS selector and in an SVG attribute without further escaping.
    Repeated raw ids get ``__2``, ``__3``… in order of appearance (``__`` cannot
    come from the encoding, so the suffix is unambiguous).

    Parameters
    ----------
    prefix : str
        Short kind tag, letters only (``"st"``, ``"sh"``, ``"rp"``).
    values : iterable
        Raw ids (any type; missing values give an empty token).

    Returns
    -------
    numpy.ndarray of str

    >>> dom_ids("st", ["A1", "a b", "A1", "<x>"]).tolist()
    ['st-A1', 'st-a_20b', 'st-A1__2', 'st-_3cx_3e']
    """
    if not prefix.isalpha():
        raise ValueError(f"dom id prefix must be letters only, got {prefix!r}")
    s = pd.Series(list(values) if not isinstance(values, pd.Series) else values, dtype=object)
    s = s.where(s.notna(), "").astype(str).reset_index(drop=True)
    plain = s.str.fullmatch(_ID_SAFE.pattern).fillna(False).to_numpy(bool)
    token = s.copy()
    if (~plain).any():  # only the odd ids pay for the regex replacement
        token[~plain] = s[~plain].str.replace(_ID_UNSAFE, _encode_char, regex=True)
    token = prefix + "-" + token
    dup = token.groupby(token).cumcount().to_numpy()
    out = token.to_numpy(dtype=object)
    if (dup > 0).any():
        out[dup > 0] = out[dup > 0] + "__" + (dup[dup > 0] + 1).astype(str).astype(object)
    return out.astype(str)


def decode_dom_id(token: str) -> tuple[str, str, int]:
    """Split a token from :func:`dom_ids` back into ``(prefix, raw id, occurrence)``.

    >>> decode_dom_id("st-a_20b__2")
    ('st', 'a b', 2)
    """
    prefix, _, rest = token.partition("-")
    m = re.fullmatch(r"(.*?)__([0-9]+)", rest)
    body, count = (m.group(1), m.group(2)) if m else (rest, "1")
    raw = re.sub(r"(?:_[0-9a-f]{2})+", lambda m: bytes.fromhex(m.group(0).replace("_", "")).decode("utf-8", "surrogatepass"), body)
    return prefix, raw, int(count)


def css_colours(values: Iterable[Any], default: str = "#9a9a9a") -> tuple[np.ndarray, np.ndarray]:
    """Validate colours from a file and return them as ``#rrggbb``.

    Anything matplotlib reads as a colour (``#abc``, ``#aabbcc``, CSS4 names,
    ``(r, g, b)`` tuples in 0–1) is accepted; everything else gets ``default``.
    The raw text never reaches a style, so it cannot inject CSS.

    Returns
    -------
    colours : numpy.ndarray of str
    bad : numpy.ndarray of bool
        True where the input was not a colour (and was not missing).

    >>> c, bad = css_colours(["red", "#0f0", "url(x)", None])
    >>> c.tolist(), bad.tolist()
    (['#ff0000', '#00ff00', '#9a9a9a', '#9a9a9a'], [False, False, True, False])
    """
    from matplotlib.colors import to_hex

    s = pd.Series(list(values), dtype=object)
    missing = s.isna().to_numpy()
    codes, uniques = pd.factorize(s.where(~missing, None).map(repr, na_action="ignore"))
    raws = s[~missing].drop_duplicates().tolist()  # same order as ``uniques``
    table = []
    for raw in raws:  # loop over the distinct colours (a handful), not over rows
        try:
            ok = not (isinstance(raw, str) and "(" in raw)  # no url(...), var(...), rgb(...)
            table.append(to_hex(raw) if ok else "")
        except (ValueError, TypeError):
            table.append("")
    lut = np.array(table + [""], dtype=object)  # index -1 (missing) -> ""
    hexes = lut[codes]
    bad = (hexes == "") & ~missing
    hexes[hexes == ""] = default
    return hexes.astype(str), bad
