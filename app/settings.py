"""All configuration in one object, read from TRENDAUDIT_* environment variables.

The app receives a Settings instance through ``create_app(settings)``; tests build their own.
Nothing here opens a connection or touches the disk.
"""

from __future__ import annotations

from pathlib import Path

from pydantic import Field, field_validator
from pydantic_settings import BaseSettings, SettingsConfigDict

PACKAGE_ROOT = Path(__file__).resolve().parent
PROJECT_ROOT = PACKAGE_ROOT.parent


def shipped_dir(name: str) -> Path:
    """A folder the app serves from (``templates``, ``static``): inside the package when it was installed from a
    wheel (setup.py puts them there), else at the top of the source checkout."""
    packaged = PACKAGE_ROOT / name
    return packaged if packaged.is_dir() else PROJECT_ROOT / name


class Settings(BaseSettings):
    model_config = SettingsConfigDict(env_prefix="TRENDAUDIT_", extra="ignore")

    database_url: str = Field(
        default=f"sqlite:///{PROJECT_ROOT / 'var' / 'trendaudit.sqlite3'}",
        description="SQLAlchemy URL: sqlite:///path or postgresql+psycopg://user@host/db",
    )
    api_keys: str = Field(default="", description="Comma-separated keys; when set, creating, listing and deleting need one.")
    host: str = "127.0.0.1"
    port: int = 8000
    public_base_url: str = ""  # an https address here also marks the desk's key cookie Secure
    # Serving on a non-loopback address without keys hands every record's id, title and verdict to anyone who
    # can reach the server (GET /api/v1/audits, /history): refused unless this says the exposure is deliberate.
    public_deployment: bool = False
    # Addresses of reverse proxies whose X-Forwarded-Proto / X-Forwarded-For are believed (uvicorn's
    # forwarded_allow_ips); a request through them over https gets Secure cookies, and is counted by its client.
    trusted_proxies: str = ""
    # Wrong keys a client may send before it is made to wait (a per-client moving window, in memory, per process).
    key_guess_limit: str = "10/minute"
    # Requests that need no key (the desk's preview always; every create, list and /trend when no keys are set)
    # one client may send in a moving window, in memory, per process.
    anonymous_rate_limit: str = "300/minute"
    # Store faults: how long a connection, a statement or a wait for a pooled connection may take before the
    # request is answered 503 (our requirement: a fault is reported within seconds, never a hang).
    store_timeout_seconds: float = 5.0

    # Limits, enforced where input enters.
    max_upload_bytes: int = 5 * 1024 * 1024
    # An audit's work is simulations x points: at the default 2,000 simulations 50,000 daily points took
    # about 23 s and 180 MB on the project's loaded 2-core machine, 200,000 points 60-120 s, past the
    # request limit (measured for the benchmarks, bench/README.md).
    max_points: int = 50_000
    max_simulations: int = 20_000
    # Points x simulations: 1,800 monthly points x 20,000 fits; 50,000 points x 2,000 is the same work.
    max_simulated_points: int = 100_000_000
    max_string_length: int = 2_000
    # The covariate lag search's work (app.service.covariates.lag_search_work): 2e9 units is about a second or
    # two on the project's machine (measured: 2,000 points, 8 covariates, 500 lags, AIC rule is 2.4e10 units
    # and took 32.5 s); a service without keys serves everyone with the smaller budget.
    max_lag_search_work: int = 2_000_000_000
    anonymous_lag_search_work: int = 200_000_000
    request_timeout_seconds: float = 60.0

    # Statistics defaults.
    default_simulations: int = 2_000
    default_confidence: float = 0.95
    default_noise: str = "auto"

    # Compute pool: CPU-bound audits run here, off the event loop.
    compute_workers: int = 2
    compute_queue: int = 8
    # Worker processes a verdict timeline's cuts run on, shared by the server process (below 2: none, the cuts run
    # in the thread working the timeline out; see app.service.timeline).
    timeline_processes: int = 2

    # Report charts: drawn on one background thread after each record is stored, and kept in the
    # database, so a report opens without drawing. Past the queue a record's first view draws them.
    draw_charts_ahead: bool = True
    chart_queue: int = 1_000  # record ids only: the drawer reads each record when its turn comes

    # Batches (POST /api/v1/batches) and durable jobs. Every accepted item is kept in the store before the 202.
    max_batch_items: int = 5_000
    max_batch_bytes: int = 50 * 1024 * 1024  # a batch's body; every other body keeps max_upload_bytes
    # Items queued or running at once for one API key (or, with no keys, one client): past it a batch is 429.
    max_items_in_flight_per_key: int = 10_000
    # SQLite: threads of the web process that run batch items, each only while an interactive audit would still
    # start at once. PostgreSQL: web processes only enqueue; `trendaudit worker` processes run the items.
    batch_workers: int = 1
    job_attempts: int = 3  # runs of an item that fails unexpectedly (a crash, a store fault) before it is failed
    job_lease_seconds: float = 30.0  # SQLite: an item a dead process held is taken up again after this
    worker_concurrency: int = 1  # items one `trendaudit worker` runs at once (one per core is the rule)
    worker_heartbeat_seconds: float = 10.0  # how often a worker says it is alive
    worker_stalled_seconds: float = 30.0  # a worker silent this long is dead: its running items are retried
    results_follow_seconds: float = 600.0  # longest a results stream waits for unfinished items

    samples_dir: Path = PROJECT_ROOT / "sample_series"

    # Data fetched from a link the user gives (app.ingest.fetch): https only unless http is allowed; loopback
    # only for tests against a local server, never in a deployment.
    fetch_allow_http: bool = False
    fetch_allow_loopback: bool = False
    fetch_max_bytes: int = 20 * 1024 * 1024
    fetch_timeout_seconds: float = 30.0

    @field_validator("api_keys")
    @classmethod
    def _strip(cls, value: str) -> str:
        return value.strip()

    @property
    def lag_search_budget(self) -> int:
        """Keyed requests get the full budget; when no keys are set, every request is anonymous."""
        return self.max_lag_search_work if self.api_key_list else self.anonymous_lag_search_work

    @property
    def public_https(self) -> bool:
        return self.public_base_url.lower().startswith("https://")

    @property
    def api_key_list(self) -> list[str]:
        return [k.strip() for k in self.api_keys.split(",") if k.strip()]
