"""Seeded generator of the bundled demo panel and of its planted truth.

The scenario is invented: thirty fictional regions observed 1990-2023 with
GDP, population, energy use, territorial and consumption-based greenhouse-gas
emissions, domestic material consumption and material footprint. Every number
is produced here from ``numpy.random.default_rng(seed)``; no real data enter.

All series are built additively in logs::

    log gdp_pc  = level + growth * s + transition + recession + AR(1) noise
    log ghg_pc  = club path (type specific) + transition + recession + noise

so that the log emission intensity ``ghg / gdp`` carries the planted trend
(with a single kink for absolute decouplers) while the per-capita emissions of
the members of one club share a common long-run path (club convergence).
Here ``s = year - 1990``.

Run ``python demo_panel/generate.py`` to rewrite ``demo_panel.csv`` and
``truth.json`` next to this file.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
from numpy.typing import ArrayLike

DEFAULT_SEED = 20261202
FIRST_YEAR, LAST_YEAR = 1990, 2023
CONSUMPTION_START = 1995
RECESSION_YEAR = 2009
YEARS = np.arange(FIRST_YEAR, LAST_YEAR + 1)
STEPS = (YEARS - FIRST_YEAR).astype(float)  # s = year - 1990

REGION_NAMES = (
    "Aldwyr", "Arnquist", "Belvaron", "Brisquell", "Corrabeth", "Corvessa",
    "Drelholm", "Eskarra", "Fennivale", "Galdrun", "Harrowind", "Istrevo",
    "Jorvanne", "Kestmoor", "Lunderra", "Morvalle", "Nirhaven", "Olvessen",
    "Pellacor", "Quennart", "Rhosdane", "Saltrevik", "Tamberlye", "Ulvendor",
    "Varnholt", "Vellmark", "Wistara", "Xandrel", "Yorvessa", "Zelmarra",
)
TYPES = ("absolute", "relative", "coupled", "offshoring")
TYPE_COUNTS = dict(zip(TYPES, (9, 8, 8, 5)))
CLUB_OF_TYPE = {"absolute": 1, "relative": 2, "offshoring": 2, "coupled": 3}

# column -> (unit, decimals written to the CSV)
COLUMNS = {
    "gdp": ("million, constant prices", 1),
    "population": ("thousand persons", 1),
    "energy": ("PJ", 2),
    "ghg_territorial": ("kt CO2-equivalent, production-based", 1),
    "ghg_consumption": ("kt CO2-equivalent, consumption-based (footprint)", 1),
    "dmc": ("kt, domestic material consumption", 1),
    "material_footprint": ("kt, raw material equivalents", 1),
}

# Club paths of log per-capita territorial GHG (t CO2e per person).
CLUB_LEVEL_2023 = {1: 12.5, 2: 7.0, 3: 2.4}
HIGH_SLOPE_AFTER = -0.013  # club 1 per-capita slope after a region's break
SLOPE_CHANGE = -0.035  # change of the intensity slope at the break
MIDDLE_SLOPE = 0.004  # club 2 per-capita slope
LOW_SLOPE = 0.003  # club 3 per-capita slope (= its per-capita GDP growth); parallel to club 2
OFFSHORING_DECAY = 0.12  # geometric decay of the offshorers' excess

NOISE_RHO = 0.5
NOISE_SD = {"gdp": 0.008, "intensity": 0.010, "energy": 0.008, "share": 0.008,
            "dmc": 0.012}
RECESSION_PROFILE = {2009: 1.0, 2010: 0.5, 2011: 0.2}  # share of the GDP dip
RECESSION_EXTRA_INTENSITY = {2009: -0.025}  # extra GHG-intensity dip

# Uniform ranges (lo, hi) per type, in the order of TYPES:
# absolute, relative, coupled, offshoring. Drawn in this order.
RANGES = {
    "pop_growth": ((0.0, 0.003), (0.006, 0.011), (0.009, 0.012), (0.0, 0.002)),
    "pop0": ((400.0, 20000.0),) * 4,  # thousand persons in 1990
    "gdp_growth": ((0.026, 0.032), (0.016, 0.024),
                   (LOW_SLOPE - 0.0012, LOW_SLOPE - 0.0003), (0.016, 0.024)),
    "gdp0": ((22000, 34000), (12000, 24000), (3000, 8000), (24000, 36000)),
    "rate": ((0.07, 0.12),) * 4,  # decay rate of the transition
    "fall": ((0.028, 0.048),) * 4,  # GDP fall in the recession year
    "excess": ((0.33, 0.40),) * 4,  # offshorers' initial log excess
    "import_growth": ((0.008, 0.012),) * 4,  # offshorers' extra import growth
    "carbon0": ((55.0, 90.0),) * 4,  # kt CO2e per PJ in 1990
    "ei_trend": ((-0.020, -0.012), (-0.018, -0.008), (-0.008, -0.002),
                 (-0.018, -0.008)),
    "cs0": ((0.10, 0.30), (-0.10, 0.15), (-0.30, -0.10), (0.00, 0.10)),
    "cs_drift": ((0.002, 0.006), (-0.002, 0.004), (-0.003, 0.0), (0.0, 0.002)),
    "dmc0": ((15.0, 25.0), (10.0, 18.0), (4.0, 9.0), (12.0, 20.0)),  # t/person
    "dmc_elast": ((0.2, 0.5), (0.3, 0.6), (0.8, 1.0), (0.2, 0.5)),
    "fs0": ((0.25, 0.50), (-0.05, 0.20), (-0.35, -0.15), (0.15, 0.30)),
    "fs_drift": ((0.003, 0.008), (0.0, 0.004), (-0.002, 0.0), (0.010, 0.016)),
    "dev": ((-0.10, 0.10), (-0.08, 0.08), (-0.15, 0.15), (-0.05, 0.05)),
}


Design = dict[str, np.ndarray]


def _ar1(rng: np.random.Generator, n: int, sd: float) -> np.ndarray:
    """Stationary AR(1) noise, marginal sd ``sd``, shape ``(n, years)``."""
    shocks = rng.normal(0.0, sd * np.sqrt(1.0 - NOISE_RHO**2), (n, YEARS.size))
    out = np.empty_like(shocks)
    out[:, 0] = rng.normal(0.0, sd, n)
    for k in range(1, YEARS.size):
        out[:, k] = NOISE_RHO * out[:, k - 1] + shocks[:, k]
    return out


def _draw_design(rng: np.random.Generator) -> Design:
    """Assign types, clubs, break years and the per-region parameters.

    Parameters
    ----------
    rng : numpy.random.Generator
        Source of randomness.

    Returns
    -------
    Design
        Arrays aligned with ``REGION_NAMES``: the keys of ``RANGES`` plus
        ``type``, ``club``, ``break_year`` and ``onset`` (0 where unused).
    """
    order = rng.permutation(len(REGION_NAMES))
    types = np.repeat(np.array(TYPES, dtype=object), list(TYPE_COUNTS.values()))
    types = types[np.argsort(order)]
    p: Design = {"type": types}
    p["club"] = np.array([CLUB_OF_TYPE[t] for t in types])
    absolute, offshoring = types == "absolute", types == "offshoring"
    p["break_year"] = np.zeros(types.size, dtype=int)
    p["break_year"][absolute] = rng.choice(np.arange(2003, 2013),
                                           size=absolute.sum(), replace=False)
    p["onset"] = np.zeros(types.size, dtype=int)
    p["onset"][offshoring] = rng.integers(2003, 2008, size=offshoring.sum())
    index = np.array([TYPES.index(t) for t in types])
    for key, ranges in RANGES.items():
        bounds = np.array(ranges, dtype=float)[index]
        p[key] = rng.uniform(bounds[:, 0], bounds[:, 1])
    return p


def _col(values: ArrayLike) -> np.ndarray:
    """Turn per-region values into a column for broadcasting over years."""
    return np.asarray(values, dtype=float)[:, None]


def _offshoring_weight(p: Design) -> np.ndarray:
    """Offshorers' excess weight: 1 until onset, then geometric decay."""
    weight = np.exp(-OFFSHORING_DECAY
                    * np.maximum(STEPS - _col(p["onset"] - FIRST_YEAR), 0.0))
    return np.where(_col(p["type"] == "offshoring") > 0, weight, 0.0)


def _emission_path(p: Design) -> np.ndarray:
    """Log per-capita territorial GHG trend, without transition or noise.

    Absolute decouplers follow the club-1 line after their break and a line
    steeper by ``-SLOPE_CHANGE`` before it, so a later break means a lower
    early level and all members end on the same path. Offshorers start above
    the club-2 path; their excess decays geometrically from the onset year.
    """
    level = np.log(_col([CLUB_LEVEL_2023[c] for c in p["club"]]))
    slope = _col(np.choose(p["club"] - 1,
                           [HIGH_SLOPE_AFTER, MIDDLE_SLOPE, LOW_SLOPE]))
    path = level + slope * (STEPS - STEPS[-1])
    kink = -SLOPE_CHANGE * np.minimum(STEPS - _col(p["break_year"] - FIRST_YEAR), 0.0)
    path = path + np.where(_col(p["type"] == "absolute") > 0, kink, 0.0)
    return path + _col(p["excess"]) * _offshoring_weight(p)


def _transition(p: Design) -> np.ndarray:
    """Decaying regional deviation shared by log per-capita GDP and GHG."""
    return _col(p["dev"]) * np.exp(-_col(p["rate"]) * STEPS)


def _core_logs(p: Design, rng: np.random.Generator) -> dict[str, np.ndarray]:
    """Log population, per-capita GDP and per-capita territorial GHG.

    GDP per capita dips in the recession (sized so that GDP falls by
    ``fall``); GHG intensity dips in addition, so emissions fall more.

    Parameters
    ----------
    p : Design
        Output of :func:`_draw_design`.
    rng : numpy.random.Generator
        Source of randomness.

    Returns
    -------
    dict of numpy.ndarray
        Keys ``pop``, ``gdp_pc``, ``ghg_pc`` and the noise-free ``gdp_trend``.
    """
    n = p["type"].size
    depth = _col(p["gdp_growth"] + p["pop_growth"] + p["fall"])
    profile = np.array([RECESSION_PROFILE.get(int(y), 0.0) for y in YEARS])
    extra = np.array([RECESSION_EXTRA_INTENSITY.get(int(y), 0.0) for y in YEARS])
    gdp_trend = np.log(_col(p["gdp0"])) + _col(p["gdp_growth"]) * STEPS
    gdp_pc = (gdp_trend + _transition(p) - depth * profile
              + _ar1(rng, n, NOISE_SD["gdp"]))
    intensity = (_emission_path(p) - gdp_trend + extra
                 + _ar1(rng, n, NOISE_SD["intensity"]))
    pop = np.log(_col(p["pop0"])) + _col(p["pop_growth"]) * STEPS
    return {"pop": pop, "gdp_pc": gdp_pc, "ghg_pc": gdp_pc + intensity,
            "gdp_trend": gdp_trend}


def _derived_logs(p: Design, core: dict[str, np.ndarray],
                  rng: np.random.Generator) -> dict[str, np.ndarray]:
    """Log totals of all columns (energy, consumption GHG, materials included).

    Parameters
    ----------
    p : Design
        Output of :func:`_draw_design`.
    core : dict of numpy.ndarray
        Output of :func:`_core_logs`.
    rng : numpy.random.Generator
        Source of randomness.

    Returns
    -------
    dict of numpy.ndarray
        Log values in the units of ``COLUMNS``; NaN where missing.
    """
    n = p["type"].size
    gdp = core["gdp_pc"] + core["pop"] - np.log(1000.0)
    ghg = core["ghg_pc"] + core["pop"]
    weight, excess = _offshoring_weight(p), _col(p["excess"])
    offshoring = _col(p["type"] == "offshoring")
    # energy intensity (PJ per million) such that kt CO2e / PJ starts at carbon0
    ei0 = (np.log(1000.0 / _col(p["carbon0"])) + _emission_path(p)[:, :1]
           - core["gdp_trend"][:, :1])
    energy = (gdp + ei0 + _col(p["ei_trend"]) * STEPS
              + 0.5 * excess * (weight - offshoring)
              + _ar1(rng, n, NOISE_SD["energy"]))
    since = np.maximum(STEPS - _col(p["onset"] - FIRST_YEAR), 0.0)
    relocated = offshoring * (excess * (1.0 - weight)
                              + _col(p["import_growth"]) * since)
    cons_share = (np.log1p(_col(p["cs0"])) + _col(p["cs_drift"]) * STEPS
                  + relocated + _ar1(rng, n, NOISE_SD["share"]))
    growth = core["gdp_pc"] - np.log(_col(p["gdp0"]))
    dmc = (np.log(_col(p["dmc0"])) + _col(p["dmc_elast"]) * growth
           + core["pop"] + _ar1(rng, n, NOISE_SD["dmc"]))
    foot_share = (np.log1p(_col(p["fs0"])) + _col(p["fs_drift"]) * STEPS
                  + _ar1(rng, n, NOISE_SD["share"]))
    early = YEARS < CONSUMPTION_START
    return {"gdp": gdp, "population": core["pop"], "energy": energy,
            "ghg_territorial": ghg,
            "ghg_consumption": np.where(early, np.nan, ghg + cons_share),
            "dmc": dmc,
            "material_footprint": np.where(early, np.nan, dmc + foot_share)}


def _long_table(logs: dict[str, np.ndarray]) -> pd.DataFrame:
    """Exponentiate, round and stack the series into the long layout.

    Parameters
    ----------
    logs : dict of numpy.ndarray
        Log values, shape ``(regions, years)`` each.

    Returns
    -------
    pandas.DataFrame
        One row per (region, year), sorted by region and year.
    """
    frame = pd.DataFrame({
        "region": pd.Series(np.repeat(REGION_NAMES, YEARS.size), dtype="str"),
        "year": np.tile(YEARS, len(REGION_NAMES)).astype("int64"),
    })
    for column, (_, decimals) in COLUMNS.items():
        frame[column] = np.round(np.exp(logs[column]).ravel(), decimals)
    return frame.sort_values(["region", "year"], ignore_index=True)


def _region_truth(p: Design) -> dict[str, dict]:
    """Planted per-region facts.

    ``ghg_gdp_elasticity`` is the ratio of the OLS trend slopes (1990-2023) of
    log GHG and log GDP computed from the noise-free components.

    Returns
    -------
    dict
        Region name -> facts.
    """
    common = _transition(p) + _col(p["pop_growth"]) * STEPS
    trends = np.vstack([_emission_path(p) + common,
                        _col(p["gdp_growth"]) * STEPS + common])
    slopes = np.polyfit(STEPS, trends.T, 1)[0]
    elasticity = slopes[: len(REGION_NAMES)] / slopes[len(REGION_NAMES):]
    out = {}
    for i, name in enumerate(REGION_NAMES):
        kind = str(p["type"][i])
        facts: dict = {"type": kind, "club": int(p["club"][i]),
                       "break_year": None, "offshoring_onset": None,
                       "population_growth": round(float(p["pop_growth"][i]), 4),
                       "gdp_per_capita_growth": round(float(p["gdp_growth"][i]), 4),
                       "recession_gdp_fall": round(float(p["fall"][i]), 4)}
        if kind == "absolute":
            after = HIGH_SLOPE_AFTER - float(p["gdp_growth"][i])
            facts["break_year"] = int(p["break_year"][i])
            facts["intensity_slope_before"] = round(after - SLOPE_CHANGE, 4)
            facts["intensity_slope_after"] = round(after, 4)
        elif kind == "offshoring":
            facts["offshoring_onset"] = int(p["onset"][i])
        else:
            facts["ghg_gdp_elasticity"] = round(float(elasticity[i]), 3)
        out[name] = facts
    return out


def _truth(p: Design, seed: int) -> dict:
    """Assemble the planted truth of the scenario.

    Parameters
    ----------
    p : Design
        Output of :func:`_draw_design`.
    seed : int
        Seed used.

    Returns
    -------
    dict
        JSON-serialisable truth.
    """
    regions = _region_truth(p)
    clubs = {str(c): sorted(r for r, f in regions.items() if f["club"] == c)
             for c in sorted(CLUB_LEVEL_2023)}
    return {
        "seed": int(seed), "years": [FIRST_YEAR, LAST_YEAR],
        "break_convention": ("break_year is the last year of the old regime; "
                             "the new slope of log(ghg_territorial / gdp) "
                             "applies from break_year + 1 (continuous kink)"),
        "recession_years": [RECESSION_YEAR],
        "consumption_basis_starts": CONSUMPTION_START,
        "offshoring_convention": ("territorial GHG falls and consumption-based "
                                  "GHG rises over offshoring_onset + 1 .. 2023"),
        "club_variable": "log(ghg_territorial / population), t CO2e per person",
        "club_levels_2023": {str(c): v for c, v in CLUB_LEVEL_2023.items()},
        "columns": {c: unit for c, (unit, _) in COLUMNS.items()},
        "regions": regions, "clubs": clubs, "divergent": [],
        "note": "Invented scenario; the data describe no real place.",
    }


def generate(seed: int = DEFAULT_SEED) -> tuple[pd.DataFrame, dict]:
    """Generate the demo panel and its planted truth.

    Parameters
    ----------
    seed : int, default 20261202
        Seed of ``numpy.random.default_rng``.

    Returns
    -------
    panel : pandas.DataFrame
        Long table, one row per (region, year): ``region``, ``year`` and the
        columns of ``COLUMNS``, rounded exactly as written to the CSV.
    truth : dict
        Planted types, clubs, break years and conventions.
    """
    rng = np.random.default_rng(seed)
    design = _draw_design(rng)
    logs = _derived_logs(design, _core_logs(design, rng), rng)
    return _long_table(logs), _truth(design, seed)


def _csv_text(panel: pd.DataFrame) -> str:
    """Format the panel as CSV text: fixed decimals, empty missing cells.

    Parameters
    ----------
    panel : pandas.DataFrame
        Output of :func:`generate`.

    Returns
    -------
    str
        CSV text with ``\\n`` line endings.
    """
    cells = [panel["region"].astype(str).tolist(), panel["year"].astype(str).tolist()]
    for column, (_, decimals) in COLUMNS.items():
        cells.append([f"{v:.{decimals}f}" if np.isfinite(v) else ""
                      for v in panel[column].to_numpy()])
    lines = [",".join(["region", "year", *COLUMNS])]
    lines += [",".join(row) for row in zip(*cells)]
    return "\n".join(lines) + "\n"


def write(folder: str | Path | None = None,
          seed: int = DEFAULT_SEED) -> tuple[Path, Path]:
    """Write ``demo_panel.csv`` and ``truth.json`` into ``folder``.

    Parameters
    ----------
    folder : str or pathlib.Path, optional
        Target folder; defaults to the folder of this module.
    seed : int, default 20261202
        Seed passed to :func:`generate`.

    Returns
    -------
    tuple of pathlib.Path
        Paths of the CSV file and of the JSON file.
    """
    target = Path(__file__).resolve().parent if folder is None else Path(folder)
    target.mkdir(parents=True, exist_ok=True)
    panel, truth = generate(seed)
    csv_path, json_path = target / "demo_panel.csv", target / "truth.json"
    csv_path.write_bytes(_csv_text(panel).encode("utf-8"))
    text = json.dumps(truth, sort_keys=True, indent=2, ensure_ascii=True) + "\n"
    json_path.write_bytes(text.encode("utf-8"))
    return csv_path, json_path


if __name__ == "__main__":
    write()
