"""Writes Trend Audit's demo series: INVENTED data for an invented place.

Quorvane Province, the Wrenhollow Point station, the Halvorrin Glacier, Lake Orrindal, the
newspapers and radio programmes quoted in the claims: all made up. No number here was measured.
Each series is drawn from a stated model (trend + AR(1) noise, sometimes a hinge or a covariate)
so the audit's answer can be checked against what was built in.

    python sample_series/generate.py [OUTPUT_DIR]     (default: this file's directory)

The same numpy version gives byte-identical files on every run: each series draws from
``numpy.random.default_rng([SEED, stream])`` with a stream number of its own, so changing one series
leaves the others alone. Some stream numbers were picked so the claimed window looks the way its claim
says; the README says so.
"""

from __future__ import annotations

import json
import math
import sys
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

SEED = 20240917
MISSING_SENTINEL = -999
NOTICE = ("INVENTED demo data: Quorvane Province, Wrenhollow Point, the Halvorrin Glacier, Lake Orrindal and "
          "everyone quoted are made up; no value was measured.")


@dataclass(frozen=True)
class Claim:
    start: int | str
    end: int | str
    kind: str  # pause | slowdown | reversal | acceleration
    quote: str


@dataclass(frozen=True)
class SampleSeries:
    """One CSV file and its catalog entry."""

    name: str
    title: str
    description: str
    units: str
    sampling: str  # annual | quarterly | monthly
    columns: tuple[str, ...]  # the header; the first is the time column, the second the value column
    rows: tuple[tuple[str, ...], ...]
    claim: Claim
    what_to_expect: str
    model: str  # the generating model, for the README
    stream: int  # the noise came from default_rng([SEED, stream])
    missing_sentinels: tuple[float, ...] = field(default=())

    @property
    def file(self) -> str:
        return f"{self.name}.csv"

    def catalog_entry(self) -> dict:
        return {
            "name": self.name,
            "file": self.file,
            "title": self.title,
            "description": self.description,
            "units": self.units,
            "sampling": self.sampling,
            "time_column": self.columns[0],
            "value_column": self.columns[1],
            "extra_columns": list(self.columns[2:]),
            "missing_sentinels": list(self.missing_sentinels),
            "suggested_claim": {"start": self.claim.start, "end": self.claim.end, "kind": self.claim.kind,
                                "quote": self.claim.quote},
            "what_to_expect": self.what_to_expect,
            "rate_unit": "per decade",
        }


# ---------------------------------------------------------------------------------------------
# Building blocks


def series_rng(number: int) -> np.random.Generator:
    return np.random.default_rng([SEED, number])


def ar1_noise(rng: np.random.Generator, n: int, phi: float, innovation_sd: float, burn_in: int = 200) -> np.ndarray:
    """A stationary AR(1) path: the burn-in lets the start forget the zero it began from."""
    shocks = rng.normal(0.0, innovation_sd, n + burn_in)
    path = np.empty_like(shocks)
    path[0] = shocks[0]
    for i in range(1, shocks.size):
        path[i] = phi * path[i - 1] + shocks[i]
    return path[burn_in:]


def hinge(t: np.ndarray, at: float) -> np.ndarray:
    """Zero before ``at``, then years since ``at``: adding slope * hinge keeps the line continuous."""
    return np.maximum(t - at, 0.0)


def annual_rows(years: np.ndarray, *columns: np.ndarray, decimals: tuple[int, ...]) -> tuple[tuple[str, ...], ...]:
    return tuple((str(int(y)), *(_number(c[i], d) for c, d in zip(columns, decimals))) for i, y in enumerate(years))


def _number(value: float, decimals: int) -> str:
    text = f"{value:.{decimals}f}"
    return "0" + text[2:] if text.startswith("-0") and float(text) == 0.0 else text  # no "-0.00"


def year_window_mean(years: np.ndarray, values: np.ndarray, first: int, last: int) -> float:
    return float(values[(years >= first) & (years <= last)].mean())


# ---------------------------------------------------------------------------------------------
# The series


def provincial_annual_temperature(stream: int = 103) -> SampleSeries:
    """A constant trend; the claimed flat spell is noise that starts on a warm spike."""
    rng = series_rng(stream)
    years = np.arange(1885, 2025)
    spikes = {1912: -0.25, 1941: 0.15, 1998: 0.30}  # an invented eruption's cold year; two invented warm-ocean years
    values = 0.015 * (years - 1885) + ar1_noise(rng, years.size, phi=0.5, innovation_sd=0.12)
    for year, bump in spikes.items():
        values[years == year] += bump
    values -= year_window_mean(years, values, 1951, 1980)
    return SampleSeries(
        name="quorvane-annual-temperature",
        title="Quorvane Province annual mean temperature anomaly (invented)",
        description=("INVENTED demo data. Annual mean temperature anomaly of Quorvane Province, a made-up coastal "
                     "province, 1885-2024, relative to its 1951-1980 mean."),
        units="°C",
        sampling="annual",
        columns=("time", "value"),
        rows=annual_rows(years, values, decimals=(2,)),
        claim=Claim(1998, 2012, "pause",
                    "'The province has not warmed since 1998.' (an invented columnist in the Quorvane Tideline, "
                    "an invented weekly, 2013)"),
        what_to_expect=("Built with one constant trend of 0.15 °C per decade and AR(1) noise; 1998 is an invented "
                        "warm spike (+0.30 °C). The 1998-2012 trend is near zero, but its AR(1) range overlaps the "
                        "long-term rate and no break is supported: the flat spell is noise, picked to start on the "
                        "spike."),
        stream=stream,
        model=("0.015 °C/yr × (year − 1885) + AR(1) noise (φ = 0.5, innovation sd 0.12 °C); spikes 1912 −0.25, "
               "1941 +0.15, 1998 +0.30 °C; then the 1951-1980 mean removed"),
    )


def _ocean_index(rng: np.random.Generator, months: int) -> np.ndarray:
    """A quasi-periodic index (AR(2), period about four years), standardised, plus one invented big event."""
    radius, period = 0.93, 48.0
    a1, a2 = 2.0 * radius * math.cos(2.0 * math.pi / period), -radius**2
    shocks = rng.normal(0.0, 1.0, months + 300)
    index = np.zeros_like(shocks)
    for i in range(2, shocks.size):
        index[i] = a1 * index[i - 1] + a2 * index[i - 2] + shocks[i]
    index = index[300:]
    return (index - index.mean()) / index.std()


def station_monthly_temperature(stream: int = 200) -> SampleSeries:
    """A trend, AR(1) noise and an ocean index acting three months later."""
    rng = series_rng(stream)
    lag, coefficient = 3, 0.10
    n = (2024 - 1950 + 1) * 12
    index = _ocean_index(rng, n + lag)
    event_centre = (2015 - 1950) * 12 + 11 + lag  # an invented strong ocean event peaking in December 2015
    steps = np.arange(index.size)
    index += 2.5 * np.exp(-0.5 * ((steps - event_centre) / 4.0) ** 2)
    t = 1950 + (np.arange(n) + 0.5) / 12.0
    values = (0.018 * (t - 1950) + coefficient * index[:n]
              + ar1_noise(rng, n, phi=0.6, innovation_sd=0.24))
    index_now = index[lag:]  # the index row of month m holds the index of month m; values use index[m - 3]
    base = (t >= 1951) & (t < 1981)
    values -= values[base].mean()
    labels = [f"{1950 + m // 12}-{m % 12 + 1:02d}" for m in range(n)]
    rows = tuple((label, _number(v, 2), _number(x, 2)) for label, v, x in zip(labels, values, index_now))
    return SampleSeries(
        name="wrenhollow-point-monthly-temperature",
        title="Wrenhollow Point station monthly temperature anomaly, with an ocean index (invented)",
        description=("INVENTED demo data. Monthly temperature anomaly at Wrenhollow Point, a made-up coastal weather "
                     "station in Quorvane Province, 1950-2024, relative to 1951-1980, with 'ocean_index', an "
                     "invented standardised ocean oscillation index that drives part of the variance three "
                     "months later."),
        units="°C",
        sampling="monthly",
        columns=("time", "value", "ocean_index"),
        rows=rows,
        claim=Claim("2016-01", "2024-12", "reversal",
                    "'Wrenhollow Point has been cooling since 2016.' (an invented caller on Orrindal Valley Radio, "
                    "an invented station, 2025)"),
        what_to_expect=("Built with a constant trend of 0.18 °C per decade, AR(1) noise (φ = 0.6 per month) and "
                        "0.10 °C per unit of the ocean index three months earlier; an invented strong ocean event "
                        "peaks in December 2015. The window begins on the warm months that event caused; the "
                        "long-term trend did not change, and allowing for the index removes the apparent cooling."),
        stream=stream,
        model=("0.018 °C/yr × (t − 1950) + 0.10 °C × ocean_index three months earlier + AR(1) noise "
               "(φ = 0.6, innovation sd 0.24 °C); ocean_index: AR(2) with a four-year quasi-period, "
               "standardised, plus a +2.5 bump centred on 2015-12; 1951-1980 mean removed"),
    )


def lake_ice_days(stream: int = 315) -> SampleSeries:
    """A decline that steepens after 1990 (a genuine change) and a short uptick after a record-low year."""
    rng = series_rng(stream)
    years = np.arange(1960, 2025)
    days = (112.0 - 0.15 * (years - 1960) - 0.85 * hinge(years.astype(float), 1990.0)
            + ar1_noise(rng, years.size, phi=0.25, innovation_sd=8.0))
    days[years == 2012] -= 18.0  # an invented record-short ice season
    return SampleSeries(
        name="lake-orrindal-ice-days",
        title="Lake Orrindal ice-cover days per winter (invented)",
        description=("INVENTED demo data. Days of ice cover on Lake Orrindal, a made-up lake in Quorvane Province, "
                     "for each winter 1960-2024 (labelled by the year in which the winter ends)."),
        units="days",
        sampling="annual",
        columns=("time", "value"),
        rows=annual_rows(years, days, decimals=(0,)),
        claim=Claim(2012, 2024, "reversal",
                    "'The ice has recovered since 2012.' (an invented angling-club newsletter, the Orrindal Line, "
                    "2024)"),
        what_to_expect=("Built with a decline of 1.5 days per decade that steepens to 10 days per decade from "
                        "1990 (a continuous hinge): that change is real and a break test should find it. 2012 is an "
                        "invented record-short season (18 days below the line); the rise since then is a short "
                        "noisy uptick from that low, consistent with the steeper decline."),
        stream=stream,
        model=("112 − 0.15 d/yr × (year − 1960) − 0.85 d/yr × max(year − 1990, 0) + AR(1) noise "
               "(φ = 0.25, innovation sd 8 days); 2012 −18 days; rounded to whole days"),
    )


def lake_level(stream: int = 400) -> SampleSeries:
    """A genuine pause: the rise stops in 1995 when the glacier's meltwater passes its peak."""
    rng = series_rng(stream)
    years = np.arange(1950, 2025)
    rise_per_year = 0.012
    level = (212.40 + rise_per_year * (years - 1950) - rise_per_year * hinge(years.astype(float), 1995.0)
             + ar1_noise(rng, years.size, phi=0.5, innovation_sd=0.03))
    return SampleSeries(
        name="lake-orrindal-level",
        title="Lake Orrindal annual mean water level (invented)",
        description=("INVENTED demo data. Annual mean water level of Lake Orrindal, a made-up glacier-fed lake in "
                     "Quorvane Province, 1950-2024, in metres above an invented gauge datum."),
        units="m",
        sampling="annual",
        columns=("time", "value"),
        rows=annual_rows(years, level, decimals=(3,)),
        claim=Claim(1995, 2024, "pause",
                    "'Lake Orrindal stopped rising in the mid-1990s.' (an invented water-board report, 2024)"),
        what_to_expect=("Built with a rise of 12 cm per decade until 1995 and no trend after it (the invented "
                        "Halvorrin Glacier's meltwater passed its peak): a real pause. The trend change at 1995 "
                        "should be supported, and the window's trend should sit well below the earlier rate."),
        stream=stream,
        model=("212.40 m + 0.012 m/yr × (year − 1950) until 1995, flat after (continuous) + AR(1) noise "
               "(φ = 0.5, innovation sd 0.03 m)"),
    )


def _greenhouse_index(rng: np.random.Generator, years: np.ndarray) -> np.ndarray:
    """Grows faster every decade, like a well-mixed gas's concentration; a little reading noise."""
    return 284.0 + 136.0 * np.exp((years - 2024) / 55.0) + rng.normal(0.0, 0.15, years.size)


def greenhouse_pair(stream: int = 500) -> tuple[SampleSeries, SampleSeries]:
    """A driver and a temperature that follows 2.5 °C per doubling of it."""
    rng = series_rng(stream)
    years = np.arange(1885, 2025)
    driver = np.round(_greenhouse_index(rng, years), 2)
    response = 2.5 * np.log2(driver / driver[0]) + ar1_noise(rng, years.size, phi=0.5, innovation_sd=0.12)
    driver_series = SampleSeries(
        name="quorvane-greenhouse-index",
        title="Quorvane regional greenhouse index (invented)",
        description=("INVENTED demo data. An invented regional greenhouse index for Quorvane Province, 1885-2024, "
                     "smooth and accelerating like a concentration; the driver of "
                     "quorvane-forced-temperature."),
        units="index units (invented, ppm-like)",
        sampling="annual",
        columns=("time", "value"),
        rows=annual_rows(years, driver, decimals=(2,)),
        claim=Claim(2015, 2024, "slowdown",
                    "'The greenhouse index has grown more slowly since 2015.' (an invented industry newsletter, "
                    "2024)"),
        what_to_expect=("Built as 284 + 136·exp((year − 2024)/55) plus tiny noise: it accelerates throughout. The "
                        "2015-2024 trend is faster than the long-term straight line, so the slowdown is not "
                        "supported; a straight line is a poor model for the whole curve."),
        stream=stream,
        model="284 + 136 × exp((year − 2024)/55) + white noise (sd 0.15), rounded to 0.01",
    )
    response_series = SampleSeries(
        name="quorvane-forced-temperature",
        title="Quorvane Province temperature anomaly driven by the greenhouse index (invented)",
        description=("INVENTED demo data. An invented annual temperature anomaly for Quorvane Province, 1885-2024, "
                     "that follows 2.5 °C per doubling of the invented greenhouse index (given as the "
                     "'greenhouse_index' column) plus AR(1) noise; anomaly relative to 1885's index."),
        units="°C",
        sampling="annual",
        columns=("time", "value", "greenhouse_index"),
        rows=annual_rows(years, response, driver, decimals=(2, 2)),
        claim=Claim(1975, 2024, "acceleration",
                    "'Warming in the province has sped up since the mid-1970s.' (an invented science-desk "
                    "explainer, 2024)"),
        what_to_expect=("Built as 2.5·log2(index / index in 1885) + AR(1) noise: the forced warming speeds up as the "
                        "index does, so the acceleration is real and a break near the 1970s should be supported. "
                        "Regressed on log2 of greenhouse_index, the residual has no trend left."),
        stream=stream,
        model=("2.5 °C × log2(greenhouse_index / greenhouse_index in 1885) + AR(1) noise "
               "(φ = 0.5, innovation sd 0.12 °C)"),
    )
    return driver_series, response_series


def station_quarterly_sea_temperature(stream: int = 617) -> SampleSeries:
    """A constant trend; the 'acceleration' is a recent run of warm quarters."""
    rng = series_rng(stream)
    quarters = (2024 - 1982 + 1) * 4
    t = 1982 + (np.arange(quarters) + 0.5) / 4.0
    values = 0.016 * (t - 1982) + ar1_noise(rng, quarters, phi=0.7, innovation_sd=0.12)
    values -= values[(t >= 1991) & (t < 2021)].mean()
    labels = [f"{1982 + q // 4}-Q{q % 4 + 1}" for q in range(quarters)]
    rows = tuple((label, _number(v, 2)) for label, v in zip(labels, values))
    return SampleSeries(
        name="wrenhollow-point-quarterly-sea-temperature",
        title="Wrenhollow Point quarterly sea-surface temperature anomaly (invented)",
        description=("INVENTED demo data. Quarterly sea-surface temperature anomaly off Wrenhollow Point, a made-up "
                     "coastal station, 1982-Q1 to 2024-Q4, relative to 1991-2020."),
        units="°C",
        sampling="quarterly",
        columns=("time", "value"),
        rows=rows,
        claim=Claim("2014-Q1", "2024-Q4", "acceleration",
                    "'The sea off Wrenhollow Point is warming twice as fast since 2014.' (an invented tourism "
                    "brochure, 2025)"),
        what_to_expect=("Built with one constant trend of 0.16 °C per decade and AR(1) noise (φ = 0.7 per "
                        "quarter). Any faster 2014-2024 trend is within what the noise gives a window that short; "
                        "no acceleration is supported."),
        stream=stream,
        model="0.016 °C/yr × (t − 1982) + AR(1) noise (φ = 0.7, innovation sd 0.12 °C); 1991-2020 mean removed",
    )


def glacier_mass_balance(stream: int = 700) -> SampleSeries:
    """Mostly negative and worsening; survey gaps written as blank cells and as the -999 sentinel."""
    rng = series_rng(stream)
    years = np.arange(1965, 2025)
    balance = -0.25 - 0.014 * (years - 1965) + ar1_noise(rng, years.size, phi=0.2, innovation_sd=0.45)
    blank_years, sentinel_years = (1971, 1972, 1996), (1988, 2003, 2019)
    rows = []
    for year, value in zip(years, balance):
        cell = "" if year in blank_years else str(MISSING_SENTINEL) if year in sentinel_years else _number(value, 2)
        rows.append((str(int(year)), cell))
    return SampleSeries(
        name="halvorrin-glacier-mass-balance",
        title="Halvorrin Glacier annual mass balance, with survey gaps (invented)",
        description=("INVENTED demo data. Annual surface mass balance of the Halvorrin Glacier, a made-up glacier "
                     "above Lake Orrindal, 1965-2024, in metres of water equivalent (negative = loss). Years "
                     "without a survey are blank (1971, 1972, 1996) or hold the sentinel -999 (1988, 2003, 2019)."),
        units="m w.e.",
        sampling="annual",
        columns=("time", "value"),
        rows=tuple(rows),
        claim=Claim(2010, 2024, "pause",
                    "'The glacier's yearly losses have not grown since 2010.' (an invented ski-resort spokesperson, "
                    "2024)"),
        what_to_expect=("Built with a balance worsening by 0.14 m w.e. per decade plus AR(1) noise (φ = 0.2, "
                        "innovation sd 0.45 m w.e.): noisy enough that a 15-year window says little. Six years are "
                        "missing and should be listed as missing, not read as -999 m."),
        stream=stream,
        model=("−0.25 − 0.014 m w.e./yr × (year − 1965) + AR(1) noise (φ = 0.2, innovation sd 0.45 m w.e.); "
               "1971, 1972, 1996 blank; 1988, 2003, 2019 written as -999"),
        missing_sentinels=(MISSING_SENTINEL,),
    )


def all_series() -> list[SampleSeries]:
    driver, response = greenhouse_pair()
    return [provincial_annual_temperature(), station_monthly_temperature(), lake_ice_days(), lake_level(),
            driver, response, station_quarterly_sea_temperature(), glacier_mass_balance()]


# ---------------------------------------------------------------------------------------------
# Writing


def write_csv(path: Path, sample: SampleSeries) -> None:
    lines = [",".join(sample.columns), *(",".join(row) for row in sample.rows)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8", newline="")


def readme_text(samples: list[SampleSeries]) -> str:
    lines = [
        "# Sample series (INVENTED data)",
        "",
        f"**{NOTICE}** They exist to demonstrate and test Trend Audit; do not cite them as observations.",
        "",
        "## The scenario",
        "",
        "Quorvane Province is an invented coastal province. Its weather station, Wrenhollow Point, sits on a "
        "headland; inland, the invented Halvorrin Glacier feeds Lake Orrindal. Each file comes with a claim "
        "someone in the invented province made about a short window of it, and the catalog says what an honest "
        "audit should find, because the generating model is known: some claims are noise picked to look like a "
        "pause (the series has one constant trend), others describe a change that was really built in.",
        "",
        "## Files",
        "",
    ]
    for sample in samples:
        lines.append(f"- `{sample.file}`: {sample.title[:-len(' (invented)')]}; {sample.sampling}, "
                     f"{sample.rows[0][0]} to {sample.rows[-1][0]}, units {sample.units}; invented. "
                     f"Model: {sample.model}; noise stream {sample.stream}.")
    lines += [
        "- `catalog.json`: one entry per file: columns, units, sampling, a suggested (invented) claim and what "
        "to expect. Invented.",
        "",
        "## How they were made",
        "",
        f"`python sample_series/generate.py [OUTPUT_DIR]` (or `make samples`) writes every file here, "
        f"this README included. Each series draws its noise from `numpy.random.default_rng([{SEED}, stream])` "
        "with its own stream number (listed above), so a rerun with the same numpy gives byte-identical files "
        "(`tests/test_samples.py` checks this) and changing one series leaves the others alone. The spike, "
        "event and gap years were placed by hand. For some series the stream number was picked, among the "
        "first few hundred, so that the claimed window looks the way its claim says (flat, cooling, "
        "recovering, twice as fast): a claimant picks a window the same way. The models are exactly as "
        "stated; only the draw of noise was chosen.",
        "",
        "CSV files are plain: a header row (`time,value`, plus named numeric covariate columns where stated) "
        "and no comment lines. Annual times are whole years, quarterly times `YYYY-Qn`, monthly times `YYYY-MM`.",
        "",
    ]
    return "\n".join(lines)


def generate(output_dir: Path) -> list[Path]:
    output_dir.mkdir(parents=True, exist_ok=True)
    samples = all_series()
    written = []
    for sample in samples:
        write_csv(output_dir / sample.file, sample)
        written.append(output_dir / sample.file)
    catalog = json.dumps([s.catalog_entry() for s in samples], indent=2, ensure_ascii=False) + "\n"
    (output_dir / "catalog.json").write_text(catalog, encoding="utf-8", newline="")
    (output_dir / "README.md").write_text(readme_text(samples), encoding="utf-8", newline="")
    return [*written, output_dir / "catalog.json", output_dir / "README.md"]


def main(argv: list[str] | None = None) -> int:
    args = sys.argv[1:] if argv is None else argv
    if len(args) > 1:
        print("usage: generate.py [OUTPUT_DIR]", file=sys.stderr)
        return 2
    output_dir = Path(args[0]) if args else Path(__file__).resolve().parent
    for path in generate(output_dir):
        print(path)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
