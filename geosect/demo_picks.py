"""Synthetic travel-time picks for the sample project (invented numbers, made by geosect's own solvers).

:func:`synthetic_picks_csv` reads a written sample project (``geosect demo``), places its stations and
shots and loads its 2D model exactly as a build does, computes the model's Pg (``direct``), PmP
(``reflection:moho``) and Pn (``head:moho``) times of the borehole shots (``SP..``) at the wide-angle
stations (``TR...``) with the rays stage's solvers, and adds Gaussian noise of a stated uncertainty from a
fixed seed.  A few picks are made deliberate outliers and one row gets a time that is not a number, for
the checks to find.  The picks are **synthetic**: no instrument recorded them.
"""

from __future__ import annotations

import os
import tempfile
import tomllib
from pathlib import Path

import numpy as np
import pandas as pd

__all__ = ["synthetic_picks_csv", "PICK_PHASES", "PICKS_TOML"]

#: Phases picked: (IASPEI code written in the file, our phase, largest offset picked in km,
#: uncertainty at zero offset in s, growth of the uncertainty in s per km).  Invented values.
PICK_PHASES: tuple[tuple[str, str, float, float, float], ...] = (
    ("Pg", "direct", 140.0, 0.030, 0.0004),
    ("PmP", "reflection:moho", 230.0, 0.060, 0.0003),
    ("Pn", "head:moho", 260.0, 0.050, 0.0004),
)

#: The ``[picks]`` section that reads the file this module writes (``picks.csv`` in the project folder).
PICKS_TOML = """\
[picks]
file = "picks.csv"           # synthetic travel-time picks (Pg, PmP, Pn) of the borehole shots
reduction_velocity_kms = 8.0 # reduction velocity of the travel-time figure
[picks.columns]
shot_id = "shot"
station_id = "station"
phase = "phase"              # IASPEI codes, translated with the model's roles (conrad, moho)
time_s = "time_s"
uncertainty_s = "sigma_s"
"""


def _settings_without_picks(directory: Path):
    """The project's settings with any ``[picks]`` section left out (its file may not exist yet)."""
    from .config import PROJECT_FILE, load_settings

    source = directory / PROJECT_FILE
    text = source.read_text(encoding="utf-8")
    if "picks" not in tomllib.loads(text):
        return load_settings(directory)
    kept, skipping = [], False
    for line in text.splitlines(keepends=True):  # a loop over the lines of a short file
        head = line.strip()
        if head.startswith("[") and not head.startswith("[["):
            name = head.strip("[]").split("]")[0].strip()
            skipping = name == "picks" or name.startswith("picks.")
        elif head.startswith("[["):
            skipping = False
        if not skipping:
            kept.append(line)
    fd, name = tempfile.mkstemp(prefix=".geosect-picks-", suffix=".toml", dir=directory)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write("".join(kept))
        settings = load_settings(Path(name))
    finally:
        Path(name).unlink(missing_ok=True)
    settings.source = source
    return settings


def _context(directory: Path, out_dir: Path):
    from .pipeline import Context, Progress, run_stages, stages
    from .report import Report

    s = _settings_without_picks(directory)
    s.geology = s.faults = s.hypocentres = None  # not needed for travel times
    s.horizons, s.plans = [], []
    ctx = Context(s, out_dir, Report("synthetic picks"), Progress(quiet=True))
    by = {st.name: st for st in stages()}
    run_stages(ctx, [by[n] for n in ("inputs", "line", "place", "topography", "model") if n in by])
    return ctx


def synthetic_picks_csv(directory: str | os.PathLike, *, seed: int = 2023_09_12, keep_fraction: float = 0.85,
                        n_outliers: int = 5, shot_prefix: str = "SP", station_prefix: str = "TR") -> str:
    """Synthetic picks of the sample project, as CSV text (``shot, station, phase, time_s, sigma_s``).

    Parameters
    ----------
    directory : str or path-like
        A sample project written by ``geosect demo`` (its stations, shots, line, DEM and model are read;
        nothing is written there except a temporary copy of the project file, removed at once, when the
        project file already names a picks file that does not exist yet).
    seed : int
        Seed of the noise, the thinning and the outliers (the same text on every run).
    keep_fraction : float
        Share of the existing arrivals that get a pick (the rest are "not picked").
    n_outliers : int
        Picks moved by 0.5 to 0.9 s (a misread phase or a cycle skip), for the misfit report to show.
    shot_prefix, station_prefix : str
        Which shots and stations get picks (by id prefix): the borehole shots and the wide-angle stations.

    Returns
    -------
    str
        CSV text; phases as IASPEI codes (Pg, PmP, Pn), times and uncertainties in seconds (ms precision).
        Picks exist only where the model has the phase (status ``ok`` of the solver) and within each phase's
        offset range (:data:`PICK_PHASES`); the uncertainty grows with offset, and the noise is Gaussian with
        that standard deviation.  One row has the time ``13.O52`` (a letter O typed for a zero).

    Notes
    -----
    The times are the model's own, from the solvers the build uses (2D ray tracer for PmP, the multistage
    first-arrival solver for Pg and Pn), so the misfits of a build of the sample project are the noise,
    the outliers and nothing else.
    """
    from .stages.picks import model_times

    directory = Path(directory)
    rng = np.random.default_rng(seed)
    with tempfile.TemporaryDirectory(prefix="geosect-picks-") as tmp:
        ctx = _context(directory, Path(tmp))
        shots = ctx.artefacts["placed_shots"]
        stations = ctx.artefacts["placed_stations"]
        sh = shots[(shots["status"] == "ok") & shots["id"].astype(str).str.startswith(shot_prefix)]
        st = stations[(stations["status"] == "ok") & stations["id"].astype(str).str.startswith(station_prefix)]
        st = st.sort_values("chainage_m")
        pairs = pd.DataFrame({"shot_id": np.repeat(sh["id"].to_numpy(), len(st)),
                              "station_id": np.tile(st["id"].to_numpy(), len(sh))})
        parts = []
        for code, phase, max_km, sig0, sig_km in PICK_PHASES:  # a loop over three phases
            rows = model_times(ctx, pairs, phase)
            off_km = rows["offset_m"].to_numpy(float) / 1e3
            t_model = rows["time_s"].to_numpy(float)
            # arrivals exist where the solver says ok; none is picked within 0.2 s of the shot (common practice,
            # no source: the first tenths of a second drown in the shot's own noise)
            ok = (rows["status"].to_numpy() == "ok") & np.isfinite(t_model) & (t_model > 0.2) & (off_km <= max_km)
            sub = rows.loc[ok, ["shot_id", "station_id", "time_s", "offset_m"]].copy()
            sub["phase"] = code
            sub["sigma_s"] = np.round((sig0 + sig_km * sub["offset_m"].to_numpy(float) / 1e3) / 0.005) * 0.005
            parts.append(sub)
    picks = pd.concat(parts, ignore_index=True)
    order = {code: i for i, (code, *_rest) in enumerate(PICK_PHASES)}
    shot_order = {sid: i for i, sid in enumerate(sh["id"])}
    picks = picks.iloc[np.lexsort((picks["phase"].map(order).to_numpy(), picks["shot_id"].map(shot_order)
                                   .to_numpy()))].reset_index(drop=True)
    picks = picks[rng.random(len(picks)) < keep_fraction].reset_index(drop=True)
    sigma = picks["sigma_s"].to_numpy(float)
    t = picks["time_s"].to_numpy(float) + rng.normal(0.0, 1.0, len(picks)) * sigma
    if n_outliers and len(picks) > n_outliers + 1:
        later = np.flatnonzero(picks["time_s"].to_numpy(float) > 2.0)  # outliers where a shift stays positive
        which = rng.choice(later, size=min(n_outliers, later.size), replace=False)
        t[which] += rng.choice([-1.0, 1.0], which.size) * rng.uniform(0.5, 0.9, which.size)
    text_t = np.char.mod("%.3f", t).astype(object)
    if len(picks) > 2:
        bad = int(rng.integers(1, len(picks) - 1))
        text_t[bad] = "13.O52"
    out = pd.DataFrame({"shot": picks["shot_id"], "station": picks["station_id"], "phase": picks["phase"],
                        "time_s": text_t, "sigma_s": np.char.mod("%.3f", sigma)})
    return out.to_csv(index=False, lineterminator="\n")
