import json

import pytest

from app.report.chart_cache import clear_chart_cache
from report.documents import sample_document


@pytest.fixture
def document():
    return json.loads(sample_document())


@pytest.fixture(autouse=True)
def _fresh_chart_cache():
    # Tests reuse audit ids on purpose; a chart drawn for one document must not leak into another test.
    clear_chart_cache()
    yield
    clear_chart_cache()
