"""Each vocabulary is defined once (app.vocabulary), and every table of words about it covers it exactly."""

from __future__ import annotations

import pytest

from app.api.schemas import ClaimKind
from app.report.context import CLAIM_WORDS, VERDICT_LABELS
from app.report.correlation_context import CORRELATION_VERDICT_LABELS
from app.vocabulary import (CLAIM_KINDS, NO_CLEAR_LINK, VERDICT_CODES, WEAK_WINDOWS_EXPECTED, WEAK_WINDOWS_UNUSUAL,
                            WINDOWS_AGREE)
from app.web.forms import CLAIM_KIND_WORDS


@pytest.mark.parametrize("table", [CLAIM_WORDS, CLAIM_KIND_WORDS], ids=["report", "desk"])
def test_every_kind_of_claim_has_its_words(table):
    assert tuple(table) == CLAIM_KINDS


def test_the_api_accepts_exactly_the_kinds_of_claim():
    assert ClaimKind.__args__ == CLAIM_KINDS


def test_every_verdict_has_its_label():
    assert set(VERDICT_LABELS) == set(VERDICT_CODES)


def test_every_correlation_verdict_has_its_label():
    codes = {NO_CLEAR_LINK, WEAK_WINDOWS_UNUSUAL, WINDOWS_AGREE, WEAK_WINDOWS_EXPECTED}
    assert set(CORRELATION_VERDICT_LABELS) == codes
