"""Command line: ``trendaudit serve`` runs the web service; ``trendaudit audit FILE.csv`` audits a file and
``trendaudit correlate FILE.csv`` audits a driver-response pair of its columns, through the same code paths
as the API (ingest, run_audit or run_correlation, the one serialiser), without a server or database.
"""

from __future__ import annotations

import argparse
import os
import json
import logging
import sys
import textwrap
from pathlib import Path
from typing import Any, Sequence

from app import __version__
from app.audit.claim import NOISE_MODELS, RATE_UNITS
from app.errors import InputError
from app.service.sources import SEASONAL_CHOICES
from app.stats.correlate import TRANSFORMS
from app.vocabulary import CLAIM_KINDS

EXIT_INPUT_ERROR = 2  # the same code argparse uses for a bad command line
log = logging.getLogger("trendaudit")
# Errors name the request fields the API uses; on the command line they are these flags.
FLAGS = {"options.simulations": "--simulations", "options.seed": "--seed", "options.noise": "--noise",
         "options.confidence": "--confidence", "options.rate_unit": "--rate-unit", "claim.start": "--start",
         "claim.end": "--end", "claim.kind": "--kind", "claim.text": "--claim-text", "claim.claimant": "--claimant",
         "claim.outlet": "--outlet", "claim.made_on": "--made-on", "claim.source_url": "--claim-source-url",
         "text": "--claim-text", "covariate_columns": "--covariates", "covariate_max_lag": "--max-lag",
         "driver_column": "--driver", "response_column": "--response", "window_years": "--window-years",
         "transform": "--transform", "title": "--title"}


def _shared_options(command: argparse.ArgumentParser) -> None:
    command.add_argument("--time-column", help="name of the time column (detected when absent)")
    command.add_argument("--simulations", type=int, help="Monte Carlo simulations per test")
    command.add_argument("--seed", type=int, help="random seed (drawn and printed when absent)")
    command.add_argument("--noise", choices=NOISE_MODELS, help="noise model (default ar1)")
    command.add_argument("--confidence", type=float, help="confidence level (default 0.95)")
    command.add_argument("--title", default="", help="a name for the audit")
    command.add_argument("--json", action="store_true", help="print the full result document as JSON")
    command.add_argument("--claim-text", help="the claim's words, as said or written; with no --start/--end, "
                         "its kind and window are read from them")
    command.add_argument("--claimant", help="who made the claim")
    command.add_argument("--outlet", help="where the claim appeared")
    command.add_argument("--made-on", help="when the claim was made, YYYY-MM-DD")
    command.add_argument("--claim-source-url", help="where the claim can be read")


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
    audit.add_argument("file", type=Path, help="the data: CSV, plain text (space-separated, comment lines on top), "
                       ".xlsx or .ods; a time column and value columns, or one row per year with a column per month")
    audit.add_argument("--start", help="start of the claimed window, in any time form the data accept: a whole "
                       "year, quarter or month (1998, 2016-Q1, 2016-01) begins at its first instant; a decimal year "
                       "(1998.25) is an instant. Read from --claim-text when absent")
    audit.add_argument("--end", help="end of the claimed window, written like --start; a whole period is included")
    audit.add_argument("--kind", choices=CLAIM_KINDS, help="what the claim says (default: read from --claim-text, "
                       "else pause)")
    audit.add_argument("--rate-unit", choices=tuple(RATE_UNITS), help="how slopes are shown (default per decade)")
    audit.add_argument("--value-column", help="name of the value column (detected when absent)")
    audit.add_argument("--covariates", default="", help="other numeric columns to take out first, comma-separated "
                       "(an ENSO index, volcanic aerosol...); the adjusted series is audited too")
    audit.add_argument("--max-lag", type=int, help="largest lag tried for each covariate, in steps of the series "
                       "(default two years)")
    audit.add_argument("--sheet", help="the spreadsheet's sheet to read (default: the first holding a table)")
    audit.add_argument("--header-row", type=int, help="the row naming the columns, from 1 (found when absent)")
    audit.add_argument("--seasonal", choices=SEASONAL_CHOICES, default="auto",
                       help="a monthly or quarterly series' seasonal cycle: auto (taken out when found, the "
                            "default), remove, keep")
    _shared_options(audit)

    worker = commands.add_parser("worker", help="run queued batch items (PostgreSQL; any number of machines)")
    worker.add_argument("--concurrency", type=int, default=None,
                        help="items run at once (default TRENDAUDIT_WORKER_CONCURRENCY, else 1; one per core)")

    batch = commands.add_parser("batch", help="audit many series or claims: on a server, or here on every core")
    batch.add_argument("file", type=Path, help="JSON lines (one audit request per line, as POST /api/v1/audits "
                       "takes it) or CSV (a time column, then one column per series, audited for --start/--end)")
    batch.add_argument("--server", help="the service's address; without it the batch runs here on all cores")
    batch.add_argument("--key", default=os.environ.get("TRENDAUDIT_KEY"), help="API key (default $TRENDAUDIT_KEY)")
    batch.add_argument("--out", type=Path, help="where the results go (default standard output)")
    batch.add_argument("--format", choices=("ndjson", "csv"), help="results as JSON lines or CSV (default: by "
                       "--out's extension, else ndjson)")
    batch.add_argument("--start", help="CSV input: start of the claimed window")
    batch.add_argument("--end", help="CSV input: end of the claimed window")
    batch.add_argument("--kind", choices=CLAIM_KINDS, default="pause", help="CSV input: what the claim says")
    batch.add_argument("--simulations", type=int, help="CSV input: Monte Carlo simulations per test")

    correlate = commands.add_parser("correlate", help="audit a driver-response pair of columns of a CSV file")
    correlate.add_argument("file", type=Path, help="CSV with a time column and the two value columns")
    correlate.add_argument("--driver", required=True, help="the column thought to move the other (e.g. co2)")
    correlate.add_argument("--response", required=True, help="the column that moves (e.g. temperature)")
    correlate.add_argument("--window-years", type=float, default=15.0, help="rolling window length (default 15)")
    correlate.add_argument("--transform", choices=TRANSFORMS, default="none",
                           help="how the response follows the driver: log (per doubling) or cumulative")
    _shared_options(correlate)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = _parser()
    args = parser.parse_args(argv)
    if args.command == "audit" and (args.start is None or args.end is None) and not args.claim_text:
        parser.error("the audit needs --start and --end, or the claim's words in --claim-text")
    if args.command == "serve":
        return serve(args.host, args.port, args.workers)
    if args.command == "correlate":
        return correlate(args)
    if args.command == "worker":
        return worker(args.concurrency)
    if args.command == "batch":
        return batch(args)
    return audit(args)


def serve(host: str | None, port: int | None, workers: int) -> int:
    import uvicorn

    from app.service.startup import StartupRefused, check_exposure, check_keys, is_loopback, open_store
    from app.settings import Settings

    settings = Settings()
    host = host or settings.host  # 127.0.0.1 unless TRENDAUDIT_HOST says otherwise
    port = port or settings.port
    logging.basicConfig(level=logging.INFO, format="%(levelname)s: %(message)s")
    try:
        check_keys(settings)
        check_exposure(settings, host)
        open_store(settings).dispose()  # a wrong path or address is named here, before any worker starts
    except StartupRefused as refusal:
        print(f"trendaudit: {refusal}", file=sys.stderr)
        return 2
    if not settings.api_key_list:
        reach = ("only this machine can reach it" if is_loopback(host)
                 else "ANYONE who can reach this address can create, list and delete audits")
        log.warning("No API keys set (TRENDAUDIT_API_KEYS): the service is open (bound to %s; %s)", host, reach)
    # Audits are many small least-squares problems; a second BLAS thread per call only spins (measured:
    # about 20% more throughput with one). Set before the workers start, so each imports numpy with it.
    for variable in BLAS_THREAD_VARIABLES:
        os.environ.setdefault(variable, "1")
    proxies = {"proxy_headers": True, "forwarded_allow_ips": settings.trusted_proxies} if settings.trusted_proxies else {}
    uvicorn.run("app.main:app", host=host, port=port, workers=workers, log_level="info", **proxies)
    return 0


BLAS_THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")


def worker(concurrency: int | None) -> int:
    for variable in BLAS_THREAD_VARIABLES:  # one BLAS thread per audit, as for the web service
        os.environ.setdefault(variable, "1")
    from app.api.audits import job_from_item
    from app.errors import TrendAuditError
    from app.service.jobs import run_worker
    from app.service.startup import StartupRefused
    from app.settings import Settings

    settings = Settings()
    logging.basicConfig(level=logging.INFO, format="%(levelname)s: %(message)s")
    try:
        run_worker(settings, job_from_item, concurrency or settings.worker_concurrency)
    except (StartupRefused, TrendAuditError) as refusal:
        print(f"trendaudit: {refusal}", file=sys.stderr)
        return 2
    return 0


BATCH_CSV_COLUMNS = ("item", "status", "id", "verdict", "headline", "seed", "window_slope", "window_p_value",
                     "long_term_slope", "change_p_value", "spell_probability", "years_to_detect", "problem")


def batch_items(args: argparse.Namespace, data: bytes) -> list[dict[str, Any]]:
    """The audit requests a batch file holds: one JSON object per line, or a CSV's series under one claim."""
    import csv
    import io

    from app.errors import Location

    text = data.decode("utf-8-sig")
    if args.file.suffix.lower() != ".csv":
        items = []
        for number, line in enumerate(text.splitlines(), 1):
            if line.strip():
                try:
                    items.append(json.loads(line))
                except json.JSONDecodeError as error:
                    raise InputError(f"line {number} is not JSON: {error.msg}", location=Location(row=number),
                                     fix="Write one audit request, as a JSON object, per line") from None
        return items
    if args.start is None or args.end is None:
        raise InputError("a CSV batch needs the claim's window", location=Location(field="claim.start"),
                         fix="Give --start and --end")
    rows = list(csv.reader(io.StringIO(text)))
    if len(rows) < 2 or len(rows[0]) < 2:
        raise InputError("the CSV needs a header row, a time column and at least one series column",
                         location=Location(row=1), fix="Put the times first, then one column per series")
    header, body = rows[0], rows[1:]
    claim = {"start": args.start, "end": args.end, "kind": args.kind}
    options = {"simulations": args.simulations} if args.simulations else {}
    return [{"series": {"time": [row[0] for row in body], "value": [row[c] if c < len(row) else None for row in body],
                        "label": header[c]}, "claim": claim, "options": options}
            for c in range(1, len(header))]


def local_result(position: int, item: dict[str, Any]) -> dict[str, Any]:
    """One item audited here (a process of the pool): its verdict and key numbers, or its problem."""
    from app.api.audits import job_from_item
    from app.errors import TrendAuditError, problem_for_error
    from app.service.audits import compute_document
    from app.service.batches import key_numbers
    from app.settings import Settings

    try:
        document = compute_document(job_from_item(item, Settings()))
    except (TrendAuditError, ValueError) as error:
        error = error if isinstance(error, TrendAuditError) else InputError(str(error).splitlines()[0])
        return {"item": position, "status": "failed", "problem": problem_for_error(error)[1]}
    verdict = document["verdict"]
    return {"item": position, "status": "done", "verdict": {"code": verdict["code"], "headline": verdict["headline"]},
            "numbers": key_numbers(document)}


def _local_lines(items: list[dict[str, Any]]):
    from concurrent.futures import ProcessPoolExecutor, as_completed

    with ProcessPoolExecutor(max_workers=os.cpu_count() or 1) as pool:
        futures = [pool.submit(local_result, position, item) for position, item in enumerate(items)]
        for future in as_completed(futures):
            yield future.result()


def _server_lines(items: list[dict[str, Any]], server: str, key: str | None):
    """Submits the batch and yields each item's line once, following the results (and asking again should a
    stream end before the batch does)."""
    import httpx

    headers = {"Authorization": f"Bearer {key}"} if key else {}
    with httpx.Client(base_url=server.rstrip("/"), headers=headers, timeout=60) as client:
        answer = client.post("/api/v1/batches", json={"items": items})
        if answer.status_code != 202:
            raise InputError(f"the server refused the batch ({answer.status_code}): "
                             f"{answer.json().get('detail', answer.text[:300])}")
        location = answer.headers["location"]
        print(f"batch {answer.json()['id']}: {len(items)} items queued", file=sys.stderr)
        seen: set[int] = set()
        while len(seen) < len(items):
            with client.stream("GET", f"{location}/results", timeout=None) as stream:
                for line in stream.iter_lines():
                    found = json.loads(line) if line.strip() else None
                    if found is not None and found["item"] not in seen:
                        seen.add(found["item"])
                        yield found
            if client.get(location).json()["finished"] and len(seen) < len(items):
                raise InputError(f"the batch finished with {len(items) - len(seen)} items unaccounted for")


def _csv_row(line: dict[str, Any]) -> list[Any]:
    numbers, verdict = line.get("numbers") or {}, line.get("verdict") or {}
    values = {"item": line["item"], "status": line["status"], "id": line.get("id", ""),
              "verdict": verdict.get("code", ""), "headline": verdict.get("headline", ""), **numbers,
              "problem": (line.get("problem") or {}).get("detail", "")}
    return ["" if values.get(name) is None else values.get(name) for name in BATCH_CSV_COLUMNS]


def batch(args: argparse.Namespace) -> int:
    import csv

    data = _read(args.file)
    if data is None:
        return EXIT_INPUT_ERROR
    try:
        items = batch_items(args, data)
    except InputError as error:
        return _refuse(args.file, error)
    form = args.format or ("csv" if args.out and args.out.suffix.lower() == ".csv" else "ndjson")
    out = open(args.out, "w", newline="", encoding="utf-8") if args.out else sys.stdout
    writer = csv.writer(out) if form == "csv" else None
    if writer:
        writer.writerow(BATCH_CSV_COLUMNS)
    counts = {"done": 0, "failed": 0, "cancelled": 0}
    try:
        lines = _server_lines(items, args.server, args.key) if args.server else _local_lines(items)
        for line in lines:
            counts[line["status"]] = counts.get(line["status"], 0) + 1
            if writer:
                writer.writerow(_csv_row(line))
            else:
                out.write(json.dumps(line, separators=(",", ":")) + "\n")
            print(f"\r{sum(counts.values())}/{len(items)} finished, {counts['failed']} failed", end="",
                  file=sys.stderr, flush=True)
        print(file=sys.stderr)
    except InputError as error:
        return _refuse(args.file, error)
    finally:
        if args.out:
            out.close()
    return 0


def _read(path: Path) -> bytes | None:
    try:
        return path.read_bytes()
    except OSError as error:
        print(f"trendaudit: cannot read {path}: {error.strerror}", file=sys.stderr)
        return None


def _refuse(path: Path, error: InputError) -> int:
    from app.service.audits import rename_fields

    print(f"trendaudit: {path}: {rename_fields(error, FLAGS).detail}", file=sys.stderr)
    return EXIT_INPUT_ERROR


def _print(title: str, document: dict[str, Any], as_json: bool, text) -> None:
    if as_json:
        json.dump({"title": title, **document}, sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
    else:
        sys.stdout.write(text(title, document))


def _claim_record(args: argparse.Namespace, settings):
    from app.service.claims import claim_record

    return claim_record({"text": args.claim_text, "claimant": args.claimant, "outlet": args.outlet,
                         "made_on": args.made_on, "source_url": args.claim_source_url}, settings.max_string_length)


def _claim(args: argparse.Namespace, record, data: bytes, settings):
    """The claim from the flags; edges and kind not given are read from --claim-text, counted in the series'
    own periods."""
    from app.errors import ClaimError, Location
    from app.ingest import IngestOptions, read_csv_text
    from app.service.claim_reading import read_claim_text
    from app.service.claims import ClaimInput

    start, end, kind = args.start, args.end, args.kind
    if (start is None or end is None or kind is None) and record.text:
        series = read_csv_text(data, IngestOptions(time_column=args.time_column, value_column=args.value_column,
                                                   max_points=settings.max_points)).series
        parsed = read_claim_text(record.text, made_on=record.made_on, span=(series.start, series.end),
                                 sampling=series.sampling, max_length=settings.max_string_length)
        start, end, kind = start or parsed.start, end or parsed.end, kind or parsed.kind
    if start is None or end is None:
        raise ClaimError("the claimed window has no " + ("start" if start is None else "end"),
                         location=Location(field="claim.start" if start is None else "claim.end"),
                         fix="Give --start and --end, or the claim's words with --claim-text")
    return ClaimInput(kind=kind or "pause", start=start, end=end, record=record)


def audit(args: argparse.Namespace) -> int:
    from app.service.covariates import column_names
    from app.service.audits import audit_options, compute_document, job_from_file
    from app.settings import Settings

    settings = Settings()
    data = _read(args.file)
    if data is None:
        return EXIT_INPUT_ERROR
    try:
        options = audit_options({"confidence": args.confidence, "noise": args.noise, "rate_unit": args.rate_unit,
                                 "simulations": args.simulations, "seed": args.seed}, settings)
        claim = _claim(args, _claim_record(args, settings), data, settings)
        job = job_from_file(data, claim=claim, options=options,
                            settings=settings, title=args.title, time_column=args.time_column,
                            value_column=args.value_column, filename=args.file.name,
                            covariate_columns=column_names([args.covariates]), covariate_max_lag=args.max_lag,
                            sheet=args.sheet, header_row=args.header_row, seasonal=args.seasonal)
        document = compute_document(job)
    except InputError as error:
        return _refuse(args.file, error)
    _print(job.title, document, args.json, summary_text)
    return 0


def correlate(args: argparse.Namespace) -> int:
    from app.service.correlations import (compute_correlation_document, correlation_job_from_csv,
                                          correlation_options)
    from app.settings import Settings

    settings = Settings()
    data = _read(args.file)
    if data is None:
        return EXIT_INPUT_ERROR
    try:
        options = correlation_options(args.window_years, args.transform,
                                      {"confidence": args.confidence, "noise": args.noise,
                                       "simulations": args.simulations, "seed": args.seed}, settings)
        job = correlation_job_from_csv(data, driver_column=args.driver, response_column=args.response,
                                       options=options, settings=settings, title=args.title,
                                       time_column=args.time_column, filename=args.file.name,
                                       record=_claim_record(args, settings))
        document = compute_correlation_document(job)
    except InputError as error:
        return _refuse(args.file, error)
    _print(job.title, document, args.json, correlation_summary_text)
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

    from app.report.claim_context import window_change_text, window_words
    from app.report.plain_words import simulation_error

    v, ref, lt, win = doc["verdict"], doc["reference"], doc["long_term"], doc["window"]
    change, spell, detect = doc["trend_change"], doc["spell"], doc["detectability"]
    claim = doc.get("claim") or {}
    breaks = ", ".join(f"{b:.1f}" for b in (doc.get("segments") or {}).get("breakpoints") or []) or "none found"
    said_by = ", ".join(str(claim[k]) for k in ("claimant", "outlet", "made_on") if claim.get(k))
    change_over = window_change_text(doc)
    window_named = window_words(claim) or f"{win['start']:g} to {win['end']:g}"
    lines = [
        title, "",
        *([f"The claim: \u201c{claim['text']}\u201d" + (f" ({said_by})" if said_by else "")] if claim.get("text") else []),
        f"Verdict: {v['headline']}  [{v['code']}]",
        *textwrap.wrap(v["summary"], 88), "",
        f"Long-term trend {ref['start']:.1f} to {ref['end']:.1f}: {r(lt['slope'], lt.get('ci'))}, {format_p(lt.get('p_value'))}",
        f"Claimed window {window_named}: {r(win['slope'], win.get('ci'))}" + (f", {change_over}" if change_over else ""),
        f"  window trend vs zero: {format_p(win.get('p_value_vs_zero'))}; "
        f"vs the long-term trend: {format_p(win.get('p_value_vs_long_term'))}",
        f"Change of slope at the window's ends: {format_p(change.get('p_value_nominal'))} as if the window were "
        f"chosen blind, {format_p(change.get('p_value_adjusted'))} allowing for picking it"
        f"{simulation_error(change.get('p_value_adjusted_se'))}",
        f"Noise model: {(doc.get('noise') or {}).get('kind')} (chosen by the data unless set)",
        f"Chance of a spell at least this extreme somewhere in the record: {_share(spell.get('probability'))}",
        f"Years of data needed to detect the long-term trend: {_number(detect.get('years_to_detect'))}",
        f"Breakpoints (continuous segmentation): {breaks}",
        *_adjustment_lines(doc.get("adjustment"), r),
        f"Input: {doc['inputs']['n']} points, sha256 {doc['inputs']['sha256'][:16]}...; seed {doc['seed']}; "
        f"trendaudit {doc['software_version']}",
    ]
    return "\n".join(lines) + "\n"


def _adjustment_lines(adjustment: dict[str, Any] | None, rate) -> list[str]:
    if not adjustment:
        return []
    lines = ["", "Adjusted for " + ", ".join(f["name"] for f in adjustment["factors"]) + ":"]
    for f in adjustment["factors"]:
        lo, hi = (_number(c, "{:.3g}") for c in f["ci"])
        lines.append(f"  {f['name']}: {_number(f['coefficient'], '{:.3g}')} per unit (range {lo} to {hi}), "
                     f"lag {f['lag']} ({f['lag_years']:g} yr), {_share(f['variance_share'])} of the variance")
    lines.append(f"  residual spread {_number(adjustment['residual_sd_raw'], '{:.3g}')} before, "
                 f"{_number(adjustment['residual_sd_adjusted'], '{:.3g}')} after; trend with the factors "
                 f"{rate(adjustment['trend_slope'], adjustment['trend_ci'])}")
    verdict = adjustment["audit"]["verdict"]
    lines.append(f"  Verdict on the adjusted series: {verdict['headline']}  [{verdict['code']}]")
    return lines


def correlation_summary_text(title: str, doc: dict[str, Any]) -> str:
    """A plain-text summary of a correlation document, for a terminal."""
    v, rolling, null, inputs = doc["verdict"], doc["rolling"], doc["null"], doc["inputs"]
    lo, hi = (_number(c, "{:.3g}") for c in doc["slope_ci"])
    lines = [
        title, "",
        f"Verdict: {v['headline']}  [{v['code']}]",
        *textwrap.wrap(v["summary"], 88), "",
        f"Driver {inputs['driver']['label'] or 'driver'}, response {inputs['response']['label'] or 'response'}: "
        f"{inputs['n']} shared times, {inputs['start']:.1f} to {inputs['end']:.1f}; transform {doc['transform']}",
        f"Full-record slope: {_number(doc['slope'], '{:.3g}')} (range {lo} to {hi})",
    ]
    if doc.get("per_doubling"):
        d_lo, d_hi = (_number(c, "{:.3g}") for c in doc["per_doubling"]["ci"])
        lines.append(f"Per doubling of the driver: {_number(doc['per_doubling']['value'], '{:.3g}')} "
                     f"(range {d_lo} to {d_hi})")
    band_lo, band_hi = (_share(s) for s in null["share_below_half_band"])
    lines += [
        f"Correlation of levels {_number(doc['r_levels'], '{:.2f}')}, detrended {_number(doc['r_detrended'], '{:.2f}')}, "
        f"differences {_number(doc['r_differences'], '{:.2f}')}",
        f"{rolling['window_years']:g}-year windows with r below {rolling['threshold']:g}: "
        f"{_share(rolling['share_below_half'])} (the null's 90% band: {band_lo} to {band_hi})",
        f"Chance under the null of a window as weak as the weakest: {_number(null['probability_min_r'], '{:.3g}')}",
        *(line for warning in doc.get("warnings") or []
          for line in textwrap.wrap("Caution: " + warning, 88, subsequent_indent="  ")),
        f"Seed {doc['seed']}; trendaudit {doc['software_version']}",
    ]
    return "\n".join(lines) + "\n"


def _share(value: float | None) -> str:
    return "undetermined" if value is None else f"{100 * value:.1f}%"


def _number(value: float | None, form: str = "{:.0f}") -> str:
    return "undetermined" if value is None else form.format(value)


if __name__ == "__main__":
    sys.exit(main())
