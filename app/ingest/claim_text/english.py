"""English: the words a claim about a trend is written in. A second language is a second file like this one."""

from __future__ import annotations

from app.ingest.claim_text.language import Language, WindowPattern

_S = r"\s{1,3}"  # the space between two words: bounded, so no pattern can backtrack without end

_RISE = r"(?:warm(?:ed|ing)?|risen|rise|rose|increased?|grown|grow|gone\s{1,3}up|climbed|gained|budged|heated)"
_FALL = r"(?:fallen|fall|fell|declined?|decreased?|dropped|shrunk|gone\s{1,3}down|melted|cooled)"
_MOVING = (r"(?:rising|warming|increasing|growing|climbing|going\s{1,3}up|falling|declining|decreasing|"
           r"shrinking|melting|dropping|going\s{1,3}down)")
_NOT = r"(?:\s{1,3}not|n['’]t|\s{1,3}never)"

KIND_CUES = {
    "pause": (
        rf"\b(?:has|have|had|did|does|do){_NOT}{_S}(?:really{_S}|significantly{_S}|actually{_S})?(?:been{_S})?"
        rf"(?:{_RISE}|{_FALL})\b",
        rf"\bnot{_S}(?:{_RISE}|{_FALL})\b",
        rf"\bno{_S}(?:(?:significant|statistically{_S}significant|net|real|measurable|discernible|further|"
        rf"global|more|overall|detectable){_S})?(?:(?:global|surface|further|net){_S})?"
        r"(?:warming|rise|increase|growth|change|trend|gain|decline|loss|melting|cooling)\b",
        rf"\bstopped(?:{_S}{_MOVING})?\b", rf"\bno{_S}longer{_S}{_MOVING}\b",
        rf"\b(?:stop|stopping|halted|stalled|stalling|paused|pause|hiatus|plateau(?:ed|ing|s)?|standstill|"
        rf"stagnat(?:ed|ing|ion)|"
        rf"flat(?:lined|-lined|tened{_S}out)?|levell?(?:ed|ing){_S}off|unchanged|(?:gone|going){_S}nowhere|"
        rf"stuck)\b",
        rf"\b(?:is|are|was|were|isn['’]t|aren['’]t){_NOT}?{_S}(?:really{_S}|actually{_S})?{_MOVING}{_S}"
        rf"(?:any{_S}more|anymore)\b",
        rf"\b(?:is|are|was|were){_NOT}{_S}(?:really{_S}|actually{_S})?{_MOVING}\b",
        rf"\b(?:isn['’]t|aren['’]t|wasn['’]t|weren['’]t){_S}(?:really{_S}|actually{_S})?{_MOVING}\b",
        rf"\b(?:remained|stayed|held|been|kept){_S}(?:flat|stable|steady|level|constant|unchanged)\b",
    ),
    "slowdown": (
        rf"\bslow(?:ed|ing|s|-?down)?(?:{_S}down)?\b",
        rf"\b(?:(?:has|have|had|is|are|was|were){_S}(?:been{_S})?)?(?:(?:{_RISE}|{_FALL}|{_MOVING}){_S})?"
        rf"(?:more|much{_S}more|far{_S}more|less){_S}(?:slowly|gradually|gently)\b",
        r"\bslower\b", r"\bdecelerat(?:ed|ing|es|ion|e)\b",
        rf"\blost{_S}(?:momentum|steam|pace)\b",
        rf"\b(?:rate|pace|rise|increase|warming|growth|decline|loss){_S}(?:has{_S}|have{_S})?"
        rf"(?:eased|halved|moderated|dropped(?:{_S}off)?|fallen|declined|tapered{_S}off)\b",
        r"\btapered\b",
        rf"\b(?:half|a{_S}third|a{_S}fraction){_S}(?:of{_S})?the{_S}(?:pace|rate|speed)\b",
        rf"\bhalved{_S}(?:its|their|the){_S}(?:pace|rate|speed)\b",
    ),
    "reversal": (
        r"\b(?:cooling|cooled|cooler|colder|advancing|advanced)\b",
        rf"\b(?:has|have|had){_S}(?:been{_S})?(?:dropped|fallen|declined|decreased|gone{_S}down)\b",
        rf"\b(?:fell|dropped|declined|decreased|tumbled|plunged|plummeted)(?:{_S}(?:sharply|steadily|steeply|"
        rf"slightly))?{_S}(?:from|between|since|after)\b",
        rf"\b(?:falling|fallen|fell|dropping|dropped|declining|declined|decreasing|decreased|going{_S}down|"
        rf"gone{_S}down|trending{_S}down(?:ward)?|shrinking){_S}(?:steadily{_S})?(?:since|ever{_S}since|for)\b",
        r"\b(?:recover(?:ed|ing|y|s)?|rebound(?:ed|ing|s)?|revers(?:ed|al|ing|e))\b",
        rf"\b(?:bounced|bouncing|come|coming|came|is|are){_S}back\b",
        rf"\b(?:turned|turning){_S}(?:around|down(?:ward)?)\b",
        rf"\b(?:growing|rising|increasing|expanding|going{_S}up){_S}again\b",
        rf"\bgone{_S}into{_S}reverse\b",
    ),
    "acceleration": (
        r"\baccelerat(?:ed|ing|es|ion|e)\b",
        rf"\b(?:sped|speeded|speeding|speeds|speed){_S}up\b",
        rf"\bfaster(?:{_S}than{_S}ever)?\b",
        rf"\b(?:twice|three{_S}times|two{_S}times|double){_S}(?:as{_S})?(?:fast|quick(?:ly)?|rapid(?:ly)?)\b",
        rf"\b(?:more|ever{_S}more|much{_S}more|far{_S}more){_S}(?:quickly|rapidly|steeply|sharply)\b",
        r"\b(?:quicken(?:ed|ing|s)?|steeper|surg(?:ed|ing|es)|soar(?:ed|ing|s)|skyrocket(?:ed|ing|s)?)\b",
        rf"\b(?:picked|picking|picks){_S}up(?:{_S}(?:pace|speed|steam))?\b",
        rf"\b(?:ramped|ramping){_S}up\b",
        rf"\brecord{_S}(?:pace|speed|rate)\b",
        rf"\b(?:twice|double|three{_S}times|triple|treble)(?:{_S}the)?{_S}(?:pace|rate|speed)\b",
        rf"\b(?:doubled|tripled|trebled|quadrupled){_S}(?:its|their|the){_S}(?:pace|rate|speed)\b",
        r"\b(?:rate|pace|speed)\b[^.;!?]{0,40}\b(?:doubled|tripled|trebled|quadrupled)\b",
    ),
}

NEGATION_BEFORE = (r"\b(?:not|no|never|nor|false|untrue|myth|wrong|denied|deny|denies|debunk(?:ed|s)?|"
                   rf"refuted?|nonsense|contrary{_S}to|rather{_S}than|instead{_S}of|far{_S}from|yet{_S}to|"
                   rf"failed{_S}to)\b|n['’]t\b")
NEGATION_AFTER = (rf"\b(?:is|are|was|were|has{_S}been|remains?)(?:{_S}(?:simply|just|plainly|demonstrably))?{_S}"
                  rf"(?:false|wrong|untrue|not{_S}true|nonsense|incorrect|bogus|debunked|a{_S}myth|an{_S}illusion|"
                  rf"an{_S}artefact|an{_S}artifact|a{_S}fiction|a{_S}lie)\b"
                  rf"|\b(?:never|did{_S}not|didn['’]t){_S}(?:happened|happen|existed|exist)\b"
                  rf"|\b(?:does{_S}not|doesn['’]t){_S}(?:exist|hold{_S}up)\b")
NEGATION_EXCEPTIONS = (rf"\b(?:no{_S}(?:doubt|question|matter|wonder)|not{_S}only|no{_S}sooner|"
                       rf"never{_S}(?:before|been{_S}faster))\b")
CLAUSE_BREAK = rf"[.;!?](?!\d)|\b(?:but|however|whereas|while|although|though|yet(?!{_S}to\b))\b"

_MONTHS = {"january": 1, "february": 2, "march": 3, "april": 4, "may": 5, "june": 6, "july": 7, "august": 8,
           "september": 9, "october": 10, "november": 11, "december": 12, "jan": 1, "feb": 2, "mar": 3, "apr": 4,
           "jun": 6, "jul": 7, "aug": 8, "sep": 9, "sept": 9, "oct": 10, "nov": 11, "dec": 12,
           "spring": 3, "summer": 6, "autumn": 9, "fall": 9}  # a season as the month it begins in
_NUMBER_WORDS = {
    "a": 1, "an": 1, "one": 1, "two": 2, "three": 3, "four": 4, "five": 5, "six": 6, "seven": 7, "eight": 8,
    "nine": 9, "ten": 10, "eleven": 11, "twelve": 12, "thirteen": 13, "fourteen": 14, "fifteen": 15,
    "sixteen": 16, "seventeen": 17, "eighteen": 18, "nineteen": 19, "twenty": 20, "thirty": 30, "forty": 40,
    "fifty": 50, "sixty": 60, "seventy": 70, "eighty": 80, "ninety": 90, "half a": 0.5, "a half": 0.5,
    "a couple of": 2, "a dozen": 12, "a quarter": 0.25, "a quarter of a": 0.25, "half an": 0.5, "half": 0.5,
}
_UNIT_YEARS = {"year": 1.0, "years": 1.0, "yr": 1.0, "yrs": 1.0, "decade": 10.0, "decades": 10.0,
               "century": 100.0, "centuries": 100.0, "month": 1 / 12, "months": 1 / 12}
_SINGULAR_UNITS = frozenset({"year", "yr", "decade", "century", "month"})
_TENS = "twenty|thirty|forty|fifty|sixty|seventy|eighty|ninety"
_UNITS = "one|two|three|four|five|six|seven|eight|nine"
_TEENS = "ten|eleven|twelve|thirteen|fourteen|fifteen|sixteen|seventeen|eighteen|nineteen"
_NUMBER = (rf"(?:\d{{1,3}}(?:\.\d{{1,2}})?|(?:{_TENS})(?:[-\s](?:{_UNITS}))?|{_TEENS}|{_UNITS}|"
           rf"half{_S}an?|half|a{_S}quarter(?:{_S}of{_S}a)?|a{_S}couple{_S}of|a{_S}dozen|an?)")
_UNIT = r"(?:years?|yrs?|decades?|century|centuries|months?)"
_YEAR = r"(?<![\w.])(?:1[5-9]|2[01])\d\d(?![\d'’]|\.\d|s\b|[-/](?:\d{1,2}\b|[qQ]))"
_MONTH_NAME = r"(?:january|february|march|april|may|june|july|august|september|october|november|december|" \
              r"jan|feb|mar|apr|jun|jul|aug|sept|sep|oct|nov|dec|spring|summer|autumn|fall)\.?"
_PART = r"early|mid|late"
# Named times: a regex is built from the keys, so every phrase the patterns read has its year here.
_NAMED_YEARS = {"the turn of the century": 2000, "the turn of the millennium": 2000,
                "the turn of the new century": 2000, "the turn of the new millennium": 2000,
                "the start of the century": 2001, "the start of this century": 2001,
                "the beginning of the century": 2001, "the beginning of this century": 2001,
                "the new millennium": 2000}
_NAMED = "|".join(sorted((name.replace(" ", _S) for name in _NAMED_YEARS), key=len, reverse=True))
_FILLER = rf"(?:(?:the|its|their|a|an|that|record|peak|low|high|minimum|maximum|big|strong|great|super|el|ni[nñ]o|" \
          rf"year|of|in|about|around|roughly|at{_S}least|peaking|peaked|bottoming|topping|out|hitting|reaching){_S})?"


def _point(prefix: str) -> str:
    """A time point: an ISO form, a month and year, a decade (with its part), a named year or a year."""
    p = prefix
    return (rf"(?:(?<![\w.-])(?P<{p}iso>(?:1[5-9]|2[01])\d\d(?:[-/](?:0?[1-9]|1[0-2])(?:-[0-3]?\d)?|-?[qQ][1-4]))"
            rf"(?![\d-])"
            rf"|(?P<{p}month>{_MONTH_NAME}){_S}(?:of{_S})?(?P<{p}myear>{_YEAR})"
            rf"|(?<![\w-])(?:the{_S})?(?:(?P<{p}part>{_PART})(?:-|{_S}|-{_S}))?(?:(?P<{p}decade>(?:1[5-9]|20)\d0)|"
            rf"['’]?(?P<{p}decade2>[2-9]0))['’]?s\b"
            rf"|(?P<{p}ypart>{_PART})(?:-|{_S}|-{_S})(?P<{p}pyear>{_YEAR})"
            rf"|(?P<{p}named>{_NAMED})"
            rf"|(?P<{p}year>{_YEAR}))")


_TO = rf"(?:\s{{0,3}}(?:-|–|—)\s{{0,3}}|{_S}(?:and|to|until|till|til|through|thru|up{_S}to|up{_S}until){_S})"
_TO_BARE = rf"(?:\s{{0,3}}(?:-|–|—)\s{{0,3}}|{_S}(?:to|until|till|through|thru){_S})"
_NOW = rf"(?P<e_now>now|today|the{_S}present(?:{_S}day)?|present|date|this{_S}year)"
_AGO = rf"(?:(?:the|these|those){_S})?(?:(?:past|last|previous|preceding|recent|latest){_S})?"
_APPROX = rf"(?P<approx>(?:more{_S}than|over|almost|nearly|about|around|roughly|at{_S}least|some|well{_S}over){_S})?"
_DURATION = (rf"(?P<count>{_NUMBER})?(?P<half>{_S}and{_S}a{_S}half)?\s{{0,3}}-?"
             rf"(?:(?:straight|consecutive|successive|full|whole|long){_S})?(?P<unit>{_UNIT})"
             rf"(?P<half2>{_S}and{_S}a{_S}half)?(?:(?:{_S}and|,){_S}(?P<count2>{_NUMBER}){_S}(?P<unit2>{_UNIT}))?\b")

WINDOW_PATTERNS = (
    WindowPattern("range", rf"\b(?:between|from|since|starting{_S}in){_S}{_FILLER}{_point('s_')}{_TO}"
                           rf"(?:{_point('e_')}|{_NOW})", rank=0),
    WindowPattern("range", rf"{_point('s_')}{_TO_BARE}(?:{_point('e_')}|{_NOW})", rank=1),
    WindowPattern("since", rf"\b(?:since|after|from|starting{_S}in|starting{_S}from|beginning{_S}in|post-?)"
                           rf"\s{{0,3}}{_FILLER}{_FILLER}{_FILLER}{_point('s_')}", rank=1),
    WindowPattern("since", rf"\b(?:stopped|stop|paused|stalled|halted|peaked|ended|began|started|plateaued|slowed|"
                           rf"reversed|accelerated|levell?ed{_S}off)(?:{_S}{_MOVING})?{_S}(?:in|around|after|about)"
                           rf"{_S}{_point('s_')}", rank=2),
    WindowPattern("century", rf"\b(?:this|the{_S}current|the{_S}present|the{_S}new){_S}(?:century|millennium)\b",
                  rank=1),
    WindowPattern("century", rf"\b(?P<ordinal>21st|twenty-first|twenty{_S}first){_S}century\b", rank=1),
    WindowPattern("decade", rf"\b(?:in|during|over|throughout|across|through){_S}(?:the{_S})?"
                            rf"(?P<s_decade>(?:19|20)\d0)['’]?s\b", rank=1),
    WindowPattern("decade", rf"\b(?P<current>this|the{_S}current|the{_S}present){_S}decade\b", rank=1),
    WindowPattern("span", rf"\b(?:in|over|during|for){_S}(?:the{_S})?{_APPROX}{_DURATION}{_S}"
                          rf"(?:to|until|through|ending{_S}in|up{_S}to){_S}{_point('e_')}", rank=0),
    WindowPattern("span", rf"\b(?:in|over|during|for){_S}(?:the{_S})?{_APPROX}{_DURATION}{_S}"
                          rf"(?:since|after|from|starting{_S}in){_S}{_point('s_')}", rank=0),
    WindowPattern("span", rf"\b(?:for|in|over|during|across|throughout|within|through){_S}{_AGO}{_APPROX}"
                          rf"{_DURATION}", rank=2),
    WindowPattern("span", rf"\b(?:the|these){_S}(?:past|last|previous|latest){_S}{_APPROX}{_DURATION}", rank=3),
    WindowPattern("span", rf"\b{_APPROX}(?P<count>{_NUMBER})[-\s](?P<unit>year|decade|month)(?:-long|{_S}long)?"
                          rf"{_S}(?:pause|hiatus|plateau|slowdown|standstill|stall|lull|spell|period|stretch|run|"
                          rf"streak|trend|acceleration|decline|recovery|cooling|flat)", rank=3, vague=True),
    WindowPattern("span", rf"\b{_APPROX}(?P<count>{_NUMBER}){_S}(?P<unit>{_UNIT}){_S}(?:of|without|with{_S}no)\b",
                  rank=3, vague=True),
)

ENGLISH = Language(
    name="english",
    kind_cues=KIND_CUES,
    negation_before=NEGATION_BEFORE,
    negation_after=NEGATION_AFTER,
    negation_exceptions=NEGATION_EXCEPTIONS,
    clause_break=CLAUSE_BREAK,
    negation_reach=60,  # about ten words: "it is not true that global warming has stopped"; our choice
    window_patterns=WINDOW_PATTERNS,
    number_words=_NUMBER_WORDS,
    unit_years=_UNIT_YEARS,
    singular_units=_SINGULAR_UNITS,
    month_names=_MONTHS,
    decade_parts={"early": (1, 0, 2), "mid": (5, 4, 6), "late": (8, 7, 9)},
    year_parts={"early": (2, 1, 3), "mid": (7, 6, 8), "late": (11, 10, 12)},
    named_years=_NAMED_YEARS,
    ordinals={"21st": 21, "twenty first": 21},  # as ``plain`` writes them: hyphens read as spaces
    window_examples="'since 1998', 'between 2001 and 2012', 'from January 2016 to March 2020', "
                    "'for the past 15 years' or 'this century'",
    notes={
        "period_12": "month", "period_4": "quarter", "period_1": "year",
        "alt_kind": "the sentence also names a {kind}",
        "alt_window": "the sentence also names the window '{words}'",
        "alt_edge": "'{words}' may also mean {edge}",
        "end_made_on": "end taken as the last whole {period} before the claim was made ({made_on})",
        "end_record": "end taken as the end of the record ({end})",
        "no_kind": "no word naming the kind of change was found; read as a pause",
        "other_kinds": "the claim also reads as {kinds}",
        "other_windows": "the claim names more than one window; the most definite one is used",
        "loose_edge": "'{words}' read as {edge}",
        "approx": "'{words}' read as exactly {years:g} years",
        "rounded": "{years:g} years taken as {periods} whole {period}s",
        "century": "the century taken as starting in {start}",
        "named": "'{words}' read as {edge}",
        "refuse_long": "the claim is {length} characters long, more than the {limit} this reader takes",
        "fix_long": "Give only the sentence that states the claim",
        "refuse_window": "no time window could be read from the claim",
        "fix_window": "Name the window in the sentence, e.g. {examples}",
        "refuse_end": "the claim gives no end to its window, and neither the date it was made nor the end of "
                      "the record was given",
        "fix_end": "Give the date the claim was made, or write the end in the sentence, e.g. 'between 1998 "
                   "and 2012'",
        "refuse_order": "the window read from the claim starts at {start} but ends at {end}",
        "fix_order": "Check the years in the sentence and the date the claim was made",
    },
)
