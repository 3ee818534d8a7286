"""Command line: ``trendaudit serve`` runs the web service; ``trendaudit audit FILE.csv`` audits a file
through the same code path as the API (ingest, run_audit, audit_document), without a server or database.
"""

from __future__ import annotations

import argparse
import ipaddress
import json
import logging
import sys
import textwrap
from pathlib import Path
from typing import Any, Sequence

from app import __version__
from app.audit.claim import CLAIM_KINDS, NOISE_MODELS
from app.errors import InputError

EXIT_INPUT_ERROR = 2  # the same code argparse uses for a bad command line
log = logging.getLogger("trendaudit")


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="trendaudit", description="Checks claims that a trend paused, reversed "
                                     "or sped up, with autocorrelation-aware statistics.")
    parser.add_argument("--version", action="version", version=f"trendaudit {__version__}")
    commands = parser.add_subparsers(dest="command", required=True)

    serve = commands.add_parser("serve", help="run the web service")
    serve.add_argument("--host", default=None, help="address to bind (default TRENDAUDIT_HOST, else 127.0.0.1)")
    serve.add_argument("--port", type=int, default=None, help="port (default TRENDAUDIT_PORT, else 8000)")
    serve.add_argument("--workers", type=int, default=1, help="server processes sharing one database")

    audit = commands.add_parser("audit", help="audit a CSV file and print the result")
    audit.add_argument("file", type=Path, help="CSV with a time column and a value column")
    audit.add_argument("--start", required=True, help="start of the claimed window: a decimal year (1998) or a "
                       "month, quarter or date placed mid-period like the data (2016-01)")
    audit.add_argument("--end", required=True, help="end of the claimed window, written like --start")
    audit.add_argument("--kind", choices=CLAIM_KINDS, default="pause", help="what the claim says (default pause)")
    audit.add_argument("--time-column", help="name of the time column (detected when absent)")
    audit.add_argument("--value-column", help="name of the value column (detected when absent)")
    audit.add_argument("--simulations", type=int, help="Monte Carlo simulations per test")
    audit.add_argument("--seed", type=int, help="random seed (drawn and printed when absent)")
    audit.add_argument("--noise", choices=NOISE_MODELS, help="noise model (default ar1)")
    audit.add_argument("--confidence", type=float, help="confidence level (default 0.95)")
    audit.add_argument("--title", default="", help="a name for the audit")
    audit.add_argument("--json", action="store_true", help="print the full result document as JSON")
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    if args.command == "serve":
        return serve(args.host, args.port, args.workers)
    return audit(args)


def serve(host: str | None, port: int | None, workers: int) -> int:
    import uvicorn

    from app.settings import Settings

    settings = Settings()
    host = host or settings.host  # 127.0.0.1 unless TRENDAUDIT_HOST says otherwise
    port = port or settings.port
    logging.basicConfig(level=logging.INFO, format="%(levelname)s: %(message)s")
    if not settings.api_key_list:
        reach = ("only this machine can reach it" if _is_loopback(host)
                 else "ANYONE who can reach this address can create, list and delete audits")
        log.warning("No API keys set (TRENDAUDIT_API_KEYS): the service is open (bound to %s; %s)", host, reach)
    uvicorn.run("app.main:app", host=host, port=port, workers=workers, log_level="info")
    return 0


def _is_loopback(host: str) -> bool:
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def audit(args: argparse.Namespace) -> int:
    from app.api.service import audit_options, compute_document, job_from_csv, make_claim
    from app.settings import Settings

    settings = Settings()
    try:
        data = args.file.read_bytes()
    except OSError as error:
        print(f"trendaudit: cannot read {args.file}: {error.strerror}", file=sys.stderr)
        return EXIT_INPUT_ERROR
    try:
        options = audit_options({"confidence": args.confidence, "noise": args.noise,
                                 "simulations": args.simulations, "seed": args.seed}, settings)
        claim = make_claim(args.start, args.end, args.kind, prefix="--")
        job = job_from_csv(data, claim=claim, options=options,
                           settings=settings, title=args.title, time_column=args.time_column,
                           value_column=args.value_column, filename=args.file.name)
        document = compute_document(job)
    except InputError as error:
        print(f"trendaudit: {args.file}: {error.detail}", file=sys.stderr)
        return EXIT_INPUT_ERROR
    if args.json:
        json.dump({"title": job.title, **document}, sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
    else:
        sys.stdout.write(summary_text(job.title, document))
    return 0


def summary_text(title: str, doc: dict[str, Any]) -> str:
    """A plain-text summary of a result document, for a terminal."""
    from app.audit.verdict import format_p, format_rate

    rate = doc.get("rate") or {"factor": 1.0, "unit": "per year"}
    units = (doc.get("inputs") or {}).get("units") or ""

    def r(slope, ci=None) -> str:
        text = format_rate(slope, rate["factor"], rate["unit"], units)
        if ci and all(c is not None for c in ci):
            lo, hi = (f"{c * rate['factor']:+.3g}" for c in ci)
            text += f" (range {lo} to {hi})"
        return text

    v, ref, lt, win = doc["verdict"], doc["reference"], doc["long_term"], doc["window"]
    change, spell, detect = doc["trend_change"], doc["spell"], doc["detectability"]
    breaks = ", ".join(f"{b:.1f}" for b in (doc.get("segments") or {}).get("breakpoints") or []) or "none found"
    lines = [
        title, "",
        f"Verdict: {v['headline']}  [{v['code']}]",
        *textwrap.wrap(v["summary"], 88), "",
        f"Long-term trend {ref['start']:.1f} to {ref['end']:.1f}: {r(lt['slope'], lt.get('ci'))}, {format_p(lt.get('p_value'))}",
        f"Claimed window {win['start']:g} to {win['end']:g}: {r(win['slope'], win.get('ci'))}",
        f"  window trend vs zero: {format_p(win.get('p_value_vs_zero'))}; "
        f"vs the long-term trend: {format_p(win.get('p_value_vs_long_term'))}",
        f"Change of trend at the claimed start: {format_p(change.get('p_value_nominal'))} as if the date were "
        f"chosen blind, {format_p(change.get('p_value_adjusted'))} allowing for picking it",
        f"Chance of a spell at least this extreme somewhere in the record: {_share(spell.get('probability'))}",
        f"Years of data needed to detect the long-term trend: {_number(detect.get('years_to_detect'))}",
        f"Breakpoints (continuous segmentation): {breaks}",
        f"Input: {doc['inputs']['n']} points, sha256 {doc['inputs']['sha256'][:16]}...; seed {doc['seed']}; "
        f"trendaudit {doc['software_version']}",
    ]
    return "\n".join(lines) + "\n"


def _share(value: float | None) -> str:
    return "undetermined" if value is None else f"{100 * value:.1f}%"


def _number(value: float | None) -> str:
    return "undetermined" if value is None else f"{value:.0f}"


if __name__ == "__main__":
    sys.exit(main())
