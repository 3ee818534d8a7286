# A plain image for the service: Python slim, the project installed, uvicorn on port 8000.
# Storage defaults to SQLite under /app/var; set TRENDAUDIT_DATABASE_URL for PostgreSQL.
# The image listens on 0.0.0.0, so it refuses to start without TRENDAUDIT_API_KEYS (keys of 16 characters or
# more): without keys anyone who reaches it lists every audit's id, title and verdict. An open service is
# started only when TRENDAUDIT_PUBLIC_DEPLOYMENT=true says so deliberately (README, Hardening).
FROM python:3.11-slim

ENV PYTHONDONTWRITEBYTECODE=1 \
    OPENBLAS_NUM_THREADS=1 \
    PYTHONUNBUFFERED=1 \
    MPLBACKEND=Agg \
    TRENDAUDIT_HOST=0.0.0.0

WORKDIR /app
COPY pyproject.toml setup.py README.md ./
COPY app ./app
COPY templates ./templates
COPY static ./static
COPY sample_series ./sample_series
# Editable, so the app finds sample_series/ beside it in /app (a wheel carries templates/ and static/ too).
RUN pip install --no-cache-dir -e . && useradd --create-home trendaudit && mkdir -p var && chown trendaudit var

USER trendaudit
EXPOSE 8000
CMD ["trendaudit", "serve", "--host", "0.0.0.0", "--port", "8000", "--workers", "2"]
