"""Escaping for every context of the map page, checked with reference parsers.

The references are Python's own parsers: ``html.parser`` / ``html.unescape``
(HTML Living Standard tokenizer rules), ``xml.etree.ElementTree`` (expat, XML 1.0)
and ``json`` (RFC 8259); a JSON string literal is also a JavaScript string
literal (ECMAScript 2019, "JSON superset").
"""

from __future__ import annotations

import html
import json
import re
import xml.etree.ElementTree as ET
from html.parser import HTMLParser

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from geosect.web.escape import (
    css_colours,
    decode_dom_id,
    dom_ids,
    html_attr,
    html_text,
    js_string,
    script_json,
    script_json_text,
    svg_attr,
    svg_text,
)

HOSTILE = [
    "<img src=x onerror=window.__pwned=1>",
    "</script><script>window.__pwned=1</script>",
    "`${window.__pwned=1}`",
    "\"'><svg onload=alert(1)>",
    "<!-- comment -->",
    "a\u2028b\u2029c",
    "&amp; &lt; & ;",
    "tab\tnew\nline\rret",
    "\x00nul",
    "ünïcødé 北京 🙂",
]
TEXT = st.text(max_size=60)


class _Collect(HTMLParser):
    """Records what the HTML tokenizer sees: start tags and text data."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, list]] = []
        self.data: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, attrs))

    def handle_data(self, data):
        self.data.append(data)


def _parse(fragment: str) -> _Collect:
    p = _Collect()
    p.feed(fragment)
    p.close()
    return p


@pytest.mark.parametrize("raw", HOSTILE)
def test_html_text_is_text_only(raw):
    # Reference: html.parser (HTML tokenizer): no tag appears, the text round-trips.
    out = html_text(raw)
    p = _parse(f"<p>{out}</p>")
    assert [t for t, _ in p.tags] == ["p"]
    assert "".join(p.data) == raw.replace("\x00", "\ufffd")


@pytest.mark.parametrize("raw", HOSTILE)
def test_html_attr_stays_inside_its_quotes(raw):
    # Reference: html.parser: exactly one attribute, whose value is the raw text.
    for q in ('"', "'"):
        p = _parse(f"<span title={q}{html_attr(raw)}{q} class=x>")
        assert p.tags == [("span", [("title", raw.replace("\x00", "\ufffd")), ("class", "x")])]


@settings(max_examples=150, deadline=None)
@given(TEXT)
def test_html_text_round_trip_property(raw):
    out = html_text(raw)
    assert "<" not in out and ">" not in out and '"' not in out and "'" not in out
    assert html.unescape(out) == raw.replace("\x00", "\ufffd")


@settings(max_examples=150, deadline=None)
@given(TEXT)
def test_js_string_is_json_and_inert(raw):
    lit = js_string(raw)
    # A JSON string is a JS string literal (ECMAScript 2019); json is the reference decoder.
    assert json.loads(lit) == raw
    # Nothing that can end a script, start a template substitution or change quoting.
    inner = lit[1:-1]
    for bad in ("<", ">", "&", "`", "$", "'", '"', "\u2028", "\u2029"):
        assert bad not in inner


@settings(max_examples=150, deadline=None)
@given(st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats(allow_nan=False, allow_infinity=False) | TEXT,
    lambda c: st.lists(c, max_size=4) | st.dictionaries(TEXT, c, max_size=4),
    max_leaves=12,
))
def test_script_json_round_trip_and_cannot_close_script(obj):
    text = script_json(obj)
    assert json.loads(text) == obj
    for bad in ("<", ">", "&", "\u2028", "\u2029"):
        assert bad not in text


def test_script_json_escapes_as_documented():
    # HTML Living Standard, "Restrictions for contents of script elements": no "</script" or "<!--".
    text = script_json({"u": "</script><!--\u2028"})
    assert text == '{"u":"\\u003c/script\\u003e\\u003c!--\\u2028"}'
    assert script_json_text('"<&>"') == '"\\u003c\\u0026\\u003e"'


def test_script_json_refuses_nan():
    with pytest.raises(ValueError):
        script_json({"x": float("nan")})


@pytest.mark.parametrize("raw", HOSTILE)
def test_svg_text_and_attr_parse_as_xml(raw):
    # Reference: expat via ElementTree (XML 1.0).  Forbidden controls become U+FFFD.
    expect = re.sub("[\x00-\x08\x0b\x0c\x0e-\x1f]", "\ufffd", raw)
    doc = f'<svg xmlns="http://www.w3.org/2000/svg"><text data-n="{svg_attr(raw)}">{svg_text(raw)}</text></svg>'
    root = ET.fromstring(doc)
    t = root[0]
    assert t.text == expect.replace("\r", "\n") or (t.text or "") == expect.replace("\r\n", "\n").replace("\r", "\n")
    assert t.get("data-n") == expect  # tab/newline/return kept thanks to character references
    assert len(root) == 1 and len(t) == 0  # no element was injected


@settings(max_examples=100, deadline=None)
@given(TEXT)
def test_svg_attr_property(raw):
    expect = re.sub("[\x00-\x08\x0b\x0c\x0e-\x1f\ud800-\udfff\ufffe\uffff]", "\ufffd", raw)
    root = ET.fromstring(f'<g a="{svg_attr(raw)}"/>')
    assert root.get("a") == expect


def test_dom_ids_are_safe_unique_and_reversible():
    raw = ["S1", "S1", "a b", "<img src=x>", "", "", "x_y", "__2", "北"]
    ids = dom_ids("st", raw)
    assert len(set(ids.tolist())) == len(raw)
    assert all(re.fullmatch(r"[A-Za-z][A-Za-z0-9_-]*", i) for i in ids)
    back = [decode_dom_id(i) for i in ids]
    assert [b[1] for b in back] == raw
    assert [b[2] for b in back] == [1, 2, 1, 1, 1, 2, 1, 1, 1]
    assert ids[0] == "st-S1"  # plain ids are kept as they are


@settings(max_examples=100, deadline=None)
@given(st.lists(TEXT, max_size=8))
def test_dom_ids_property(raw):
    ids = dom_ids("rp", raw)
    assert len(set(ids.tolist())) == len(raw)
    assert all(re.fullmatch(r"rp-[A-Za-z0-9_-]*", i) for i in ids)
    assert [decode_dom_id(i)[1] for i in ids] == raw


def test_dom_ids_refuses_odd_prefix():
    with pytest.raises(ValueError):
        dom_ids("s t", ["a"])


def test_css_colours_validates():
    # Reference: matplotlib's colour parser (CSS4 names, hex); url()/expressions are refused.
    from matplotlib.colors import to_hex

    vals = ["tomato", "#ABC", "#a1b2c3", "url(javascript:x)", "red;background:url(x)", None, np.nan, "rgb(1,2,3)"]
    hexes, bad = css_colours(vals, default="#999999")
    assert hexes.tolist()[:3] == [to_hex("tomato"), to_hex("#ABC"), "#a1b2c3"]
    assert hexes.tolist()[3:] == ["#999999"] * 5
    assert bad.tolist() == [False, False, False, True, True, False, False, True]
