"""Every window a sentence names, read from the language's window patterns into edges in the series' forms."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable

from app.ingest.claim_text.anchor import Anchor, periods_per_year
from app.ingest.claim_text.grammar import Grammar, overlaps, plain
from app.ingest.claim_text.language import Language, WindowPattern
from app.ingest.window_edges import resolve_edge


@dataclass(frozen=True)
class Window:
    start: str
    end: str
    rank: int
    spans: dict[str, tuple[int, int]]
    end_assumed: bool  # the end is the anchor: the date of the claim or the end of the record
    loose: bool = False  # the words leave an edge loose ("the mid-1990s", "more than a decade")
    other_starts: tuple[str, ...] = ()
    notes: tuple[str, ...] = field(default_factory=tuple)


@dataclass(frozen=True)
class _Point:
    edge: str
    span: tuple[int, int]
    others: tuple[str, ...] = ()
    note: str | None = None


class NoAnchor(Exception):
    """A relative window was named but there is nothing to count back from."""


def read_windows(text: str, grammar: Grammar, anchor: Anchor | None) -> tuple[list[Window], int]:
    """The windows read, most definite first, and how many more were named relative to an unknown end."""
    windows, unanchored = [], 0
    for pattern, regex in grammar.windows:
        for match in regex.finditer(text):
            try:
                window = _READERS[pattern.shape](match, pattern, grammar.language, anchor)
            except NoAnchor:
                unanchored += 1
                continue
            if window is not None:
                windows.append(window)
    windows.sort(key=lambda window: (window.rank, window.loose, window.spans["window"][0]))
    return _apart(windows), unanchored


def _apart(windows: list[Window]) -> list[Window]:
    """Each stretch of words read once, by the most definite pattern ("from 2001 to 2012" is not also "from 2001")."""
    kept: list[Window] = []
    for window in windows:
        if not any(overlaps(window.spans["window"], other.spans["window"]) for other in kept):
            kept.append(window)
    return kept


def _range(match, pattern: WindowPattern, language: Language, anchor: Anchor | None) -> Window | None:
    start = _point(match, "s_", "start", language)
    end = _point(match, "e_", "end", language)
    if start is None:
        return None
    if end is None:
        return _to_anchor(match, pattern, start, anchor)
    return Window(start.edge, end.edge, pattern.rank, {"window": match.span(), "start": start.span, "end": end.span},
                  end_assumed=False, loose=pattern.vague or bool(start.others), other_starts=start.others,
                  notes=tuple(note for note in (start.note, end.note) if note))


def _since(match, pattern: WindowPattern, language: Language, anchor: Anchor | None) -> Window | None:
    start = _point(match, "s_", "start", language)
    return None if start is None else _to_anchor(match, pattern, start, anchor)


def _century(match, pattern: WindowPattern, language: Language, anchor: Anchor | None) -> Window:
    ordinal = match.groupdict().get("ordinal")
    if anchor is None:
        raise NoAnchor
    century = language.ordinals[plain(ordinal)] if ordinal else (anchor.year - 1) // 100 + 1
    first_year = (century - 1) * 100 + 1
    note = language.notes["century"].format(start=first_year)
    point = _Point(str(first_year), match.span(), others=(str(first_year - 1),), note=note)
    if century * 100 < anchor.year:
        return Window(point.edge, str(century * 100), pattern.rank, {"window": match.span(), "start": match.span(),
                      "end": match.span()}, end_assumed=False, loose=True, other_starts=point.others, notes=(note,))
    return _to_anchor(match, pattern, point, anchor)


def _decade(match, pattern: WindowPattern, language: Language, anchor: Anchor | None) -> Window:
    decade = match.groupdict().get("s_decade")
    if decade is not None:
        first = int(decade)
        return Window(str(first), str(first + 9), pattern.rank,
                      {"window": match.span(), "start": match.span(), "end": match.span()}, end_assumed=False)
    if anchor is None:
        raise NoAnchor
    return _to_anchor(match, pattern, _Point(str(anchor.year // 10 * 10), match.span()), anchor)


def _span(match, pattern: WindowPattern, language: Language, anchor: Anchor | None) -> Window | None:
    years = _duration_years(match, language)
    if years is None:
        return None
    end = _point(match, "e_", "end", language)
    start = _point(match, "s_", "start", language)
    if end is not None:
        anchor = _anchor_at(end.edge, anchor, periods_after=0)
    elif start is not None:
        anchor = _anchor_at(start.edge, anchor, periods_after=round(years * _per_year(anchor)) - 1)
    if anchor is None:
        raise NoAnchor
    exact = years * anchor.per_year
    periods = round(exact)
    if periods < 1:
        return None
    words = match.group(0)
    notes = []
    if match.groupdict().get("approx"):
        notes.append(language.notes["approx"].format(words=words.strip(), years=years))
    if abs(exact - periods) > 1e-6:
        period = language.notes[f"period_{anchor.per_year}"]
        notes.append(language.notes["rounded"].format(years=years, periods=periods, period=period))
    first = min(match.start(name) for name in ("approx", "count", "unit") if match.groupdict().get(name))
    spans = {"window": match.span(), "start": (first, match.end("unit2") if match.groupdict().get("unit2")
                                               else match.end("unit"))}
    if end is not None:
        spans["end"] = end.span
    if start is not None:
        spans["end"], spans["start"] = spans["start"], start.span
    return Window(anchor.label(periods - 1), anchor.label(), pattern.rank, spans,
                  end_assumed=end is None and start is None,
                  loose=pattern.vague or bool(match.groupdict().get("approx")), notes=tuple(notes))


def _per_year(anchor: Anchor | None) -> int:
    return anchor.per_year if anchor is not None else periods_per_year(None)


def _anchor_at(edge: str, anchor: Anchor | None, periods_after: int) -> Anchor:
    """A duration's last period, counted as the series counts: the period a written end closes ("the twenty
    years to 2019"), or ``periods_after`` periods on from the one a written start opens ("the decade since 2010")."""
    per_year = _per_year(anchor)
    if periods_after == 0:
        last = math.ceil(resolve_edge(edge, "end", field="text").instant * per_year - 1e-9) - 1
    else:
        last = math.floor(resolve_edge(edge, "start", field="text").instant * per_year + 1e-9) + periods_after
    return Anchor(index=last, per_year=per_year, from_record=False)


def _to_anchor(match, pattern: WindowPattern, start: _Point, anchor: Anchor | None) -> Window:
    if anchor is None:
        raise NoAnchor
    spans = {"window": match.span(), "start": start.span}
    now = match.groupdict().get("e_now")
    if now is not None:
        spans["end"] = match.span("e_now")
    return Window(start.edge, anchor.label(), pattern.rank, spans, end_assumed=True,
                  loose=pattern.vague or bool(start.others), other_starts=start.others,
                  notes=(start.note,) if start.note else ())


def _point(match, prefix: str, role: str, language: Language) -> _Point | None:
    found = {name[len(prefix):]: name for name, value in match.groupdict().items()
             if name.startswith(prefix) and value is not None and name != "e_now"}
    if not found:
        return None
    span = (min(match.start(name) for name in found.values()), max(match.end(name) for name in found.values()))
    group = {key: match.group(name) for key, name in found.items()}
    if "iso" in group:
        return _Point(group["iso"], span)
    if "month" in group:
        month = language.month_names[plain(group["month"]).rstrip(".")]
        return _Point(f"{int(group['myear']):04d}-{month:02d}", span)
    if "ypart" in group:
        return _part_point(language.year_parts[plain(group["ypart"])], lambda month: f"{group['pyear']}-{month:02d}",
                           span, match.string, language)
    if "named" in group:
        edge = str(language.named_years[plain(group["named"])])
        return _Point(edge, span, note=language.notes["named"].format(words=group["named"], edge=edge))
    if "decade" in group or "decade2" in group:
        return _decade_point(group, span, role, match.string, language)
    return _Point(group["year"], span)


def _decade_point(group: dict[str, str], span: tuple[int, int], role: str, text: str, language: Language) -> _Point:
    first = int(group["decade"]) if "decade" in group else 1900 + int(group["decade2"])
    span = _through_plural(text, span)
    if "part" not in group:
        edge = str(first if role == "start" else first + 9)
        return _Point(edge, span)
    return _part_point(language.decade_parts[plain(group["part"])], lambda year: str(first + year), span, text,
                       language)


def _part_point(offsets: tuple[int, ...], edge_of: Callable[[int], str], span: tuple[int, int], text: str,
                language: Language) -> _Point:
    """A part of a decade or a year ("the mid-1990s", "late 2015"): the chosen edge first, the others offered."""
    chosen, *others = offsets
    edge = edge_of(chosen)
    note = language.notes["loose_edge"].format(words=text[span[0]:span[1]], edge=edge)
    return _Point(edge, span, others=tuple(edge_of(other) for other in others), note=note)


def _through_plural(text: str, span: tuple[int, int]) -> tuple[int, int]:
    """A decade's span taken on over the plural ending its digits leave out ("1990" -> "1990s")."""
    end = span[1]
    if text[end:end + 1] in ("'", "’"):
        end += 1
    if text[end:end + 1].lower() == "s":
        end += 1
    return span[0], end


def _duration_years(match, language: Language) -> float | None:
    groups = match.groupdict()
    unit = plain(groups["unit"])
    if groups.get("count") is None:
        count = 1.0 if unit in language.singular_units else None
    else:
        count = _number(groups["count"], language)
    if count is None:
        return None
    if groups.get("half") or groups.get("half2"):
        count += 0.5
    years = count * language.unit_years[unit]
    if groups.get("count2") is not None:
        extra = _number(groups["count2"], language)
        if extra is None:
            return None
        years += extra * language.unit_years[plain(groups["unit2"])]
    return years


def _number(words: str, language: Language) -> float | None:
    text = plain(words)
    try:
        return float(text)
    except ValueError:
        pass
    if text in language.number_words:
        return float(language.number_words[text])
    parts = text.split(" ")
    if all(part in language.number_words for part in parts):
        return float(sum(language.number_words[part] for part in parts))
    return None


_READERS: dict[str, Callable] = {"range": _range, "since": _since, "century": _century, "decade": _decade,
                                 "span": _span}
