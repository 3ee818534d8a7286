"""The statistics core: pure functions, numpy arrays in, frozen dataclasses out.

Nothing in this package imports FastAPI, Jinja2, SQLAlchemy or anything under ``app.api``,
``app.report`` or ``app.store``; ``tests/test_layering.py`` checks that.
"""
