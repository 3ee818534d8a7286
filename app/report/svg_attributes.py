"""Charts that a strict Content-Security-Policy lets a browser draw.

matplotlib writes every colour, width and font as a ``style="..."`` attribute and adds one small
stylesheet (``*{stroke-linejoin: round; stroke-linecap: butt}``). Under ``style-src 'self'`` without
'unsafe-inline' a browser ignores both, and the charts come out black. Every property matplotlib uses
is also an SVG presentation attribute (``fill="#fff"``), which CSP does not govern, so each style
attribute is rewritten as presentation attributes, and the stylesheet's rule for every element moves to
the root ``<svg>``, where the two properties it sets (both inherited) reach every element that does
not set its own. That is the same result as the ``*`` rule as long as only leaf elements set them
their own way, which is how matplotlib draws (tests/hardening checks it, pixel for pixel, in Chromium).
"""

from __future__ import annotations

import re

# SVG 1.1, section 7.6 "Presentation attributes" (W3C Recommendation, 2011): the properties that may be
# written as attributes. A property outside this list cannot be kept without a style attribute.
PRESENTATION_ATTRIBUTES = frozenset("""
alignment-baseline baseline-shift clip clip-path clip-rule color color-interpolation color-interpolation-filters
color-profile color-rendering cursor direction display dominant-baseline enable-background fill fill-opacity
fill-rule filter flood-color flood-opacity font-family font-size font-size-adjust font-stretch font-style
font-variant font-weight glyph-orientation-horizontal glyph-orientation-vertical image-rendering kerning
letter-spacing lighting-color marker-end marker-mid marker-start mask opacity overflow pointer-events
shape-rendering stop-color stop-opacity stroke stroke-dasharray stroke-dashoffset stroke-linecap
stroke-linejoin stroke-miterlimit stroke-opacity stroke-width text-anchor text-decoration text-rendering
unicode-bidi visibility word-spacing writing-mode
""".split())

_TAG_WITH_STYLE = re.compile(r"<[A-Za-z][^<>]*?\sstyle=\"[^\"]*\"[^<>]*>")
_STYLE_ATTRIBUTE = re.compile(r"\sstyle=\"([^\"]*)\"")
_ATTRIBUTE = re.compile(r"\s([A-Za-z_:][-\w:.]*)=\"[^\"]*\"")
_STYLE_ELEMENT = re.compile(r"<style\b[^>]*>(.*?)</style>\s*", re.S)
_EMPTY_DEFS = re.compile(r"<defs>\s*</defs>\s*")
_RULE = re.compile(r"([^{}]+)\{([^{}]*)\}")
_SVG_OPEN = re.compile(r"<svg\b[^>]*?(?=/?>)")


class UnsupportedStyle(ValueError):
    """The SVG uses a style that has no presentation attribute; drawing it under the CSP would lose it."""


def declarations(text: str) -> list[tuple[str, str]]:
    """``"fill: #fff; stroke-width: 0.8"`` as ``[("fill", "#fff"), ("stroke-width", "0.8")]``."""
    pairs = []
    for part in text.split(";"):
        name, colon, value = part.partition(":")
        if not colon:
            if part.strip():
                raise UnsupportedStyle(f"cannot read the style declaration {part.strip()[:60]!r}")
            continue
        name = name.strip().lower()
        if name not in PRESENTATION_ATTRIBUTES:
            raise UnsupportedStyle(f"the style property {name[:40]!r} has no SVG presentation attribute")
        pairs.append((name, value.strip()))
    return pairs


def _attribute_text(pairs: list[tuple[str, str]]) -> str:
    # A property declared twice (matplotlib's images: crisp-edges, then pixelated as the fallback CSS allows)
    # keeps its last value, as in CSS; XML allows an attribute only once.
    last = dict(pairs)
    # The values come from inside a double-quoted attribute (or a stylesheet with none): no '"' can be in them.
    return "".join(f' {name}="{value.replace(chr(34), "&quot;")}"' for name, value in last.items())


def _without_attributes(tag: str, names: set[str]) -> str:
    """The tag with any of these attributes removed: the style's value wins, as it would in CSS."""
    # One pass over the tag's attributes rather than one pattern per name: thousands of tags per report.
    return _ATTRIBUTE.sub(lambda match: "" if match.group(1) in names else match.group(0), tag)


def _rewrite_tag(match: re.Match) -> str:
    tag = match.group(0)
    pairs = declarations(_STYLE_ATTRIBUTE.search(tag).group(1))
    tag = _STYLE_ATTRIBUTE.sub("", tag, count=1)
    tag = _without_attributes(tag, {name for name, _ in pairs})
    closing = "/>" if tag.endswith("/>") else ">"
    return tag[:-len(closing)].rstrip() + _attribute_text(pairs) + closing


def _stylesheet_rules(svg: str) -> tuple[str, list[tuple[str, str]]]:
    """Removes the <style> elements; returns the SVG and the declarations of their ``*`` rules."""
    every_element: list[tuple[str, str]] = []

    def take(match: re.Match) -> str:
        css = re.sub(r"<!\[CDATA\[|\]\]>", "", match.group(1))
        for selector, body in _RULE.findall(css):
            if selector.strip() != "*":
                raise UnsupportedStyle(f"the stylesheet rule for {selector.strip()[:40]!r} cannot move to attributes")
            every_element.extend(declarations(body))
        if _RULE.sub("", css).strip():
            raise UnsupportedStyle("the stylesheet holds something other than rules")
        return ""

    svg = _STYLE_ELEMENT.sub(take, svg)
    return _EMPTY_DEFS.sub("", svg), every_element


def presentation_attributes(svg: str) -> str:
    """The same drawing with no ``style`` attribute and no ``<style>`` element (module docstring)."""
    svg, root_pairs = _stylesheet_rules(svg)
    svg = _TAG_WITH_STYLE.sub(_rewrite_tag, svg)
    if root_pairs:
        opening = _SVG_OPEN.search(svg)
        if opening is None:
            raise UnsupportedStyle("no <svg> element to carry the stylesheet's rule")
        root = opening.group(0)
        # The root's own value, were it to set one, beats the rule for every element, as in CSS.
        inherited = [(name, value) for name, value in root_pairs if f' {name}="' not in root]
        svg = svg[:opening.start()] + root + _attribute_text(inherited) + svg[opening.end():]
    return svg
