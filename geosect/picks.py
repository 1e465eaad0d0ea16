"""Travel-time picks: read them, check every row, compare them with the model's times.

A picks table has one row per picked arrival: the shot, the station, the phase, the
travel time in seconds and (optionally) its uncertainty in seconds.  Every row of the
file reaches the output with a ``status``:

=================  =================================================================
status             meaning
=================  =================================================================
``ok``             usable
``unknown_shot``   the shot id is empty or not among the project's shots
``unknown_station`` the station id is empty or not among the project's stations
``unknown_phase``  the phase is not readable, names an interface the model lacks, or
                   is an IASPEI code the model's roles cannot decide
``bad_time``       the time is empty, not a number, or negative
``duplicate_pick`` a later row repeating the shot, station and phase of an earlier one
                   (the first keeps ``ok`` and is flagged ``duplicate_pick``)
``no_model_time``  (after :func:`misfits`) the model has no ray for this pick
=================  =================================================================

The first reason found wins, in the order of the table.  Warnings go to ``flags``
(``';'``-joined).

Misfits (:func:`misfits`) are

.. math::

    r_i = t_i^{\\mathrm{pick}} - t_i^{\\mathrm{model}}, \\qquad
    z_i = r_i / \\sigma_i, \\qquad
    \\chi^2_\\nu = \\frac{1}{N} \\sum_{i=1}^{N} z_i^2 ,

the residual (s), the normalised residual and the chi-square per pick of a phase (the
model is not fitted to these picks, so every pick is a degree of freedom).

Everything here is vectorised over the rows (pandas merges and numpy); loops run only
over the distinct phase strings of a file.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from .errors import InputError
from .io.points import TABLE_SUFFIXES, _numbers, add_flag, read_frame, set_status
from .model.phases import parse_phase

__all__ = [
    "DEFAULT_UNCERTAINTY_S",
    "LARGE_RESIDUAL",
    "PICK_ROLES",
    "PICK_COLUMNS",
    "MISFIT_COLUMNS",
    "PICK_STATUSES",
    "IASPEI_CODES",
    "canonical_phase",
    "translate_phase",
    "check_picks",
    "read_picks",
    "misfits",
    "summarise_misfits",
    "largest_residuals",
    "reduced_time",
    "phase_label",
]

#: Uncertainty given to a pick whose file has no uncertainty (column or value), in seconds.  The project
#: file has no key for it; 50 ms is a typical uncertainty of a crustal wide-angle pick (common practice,
#: no source).
DEFAULT_UNCERTAINTY_S = 0.05

#: Picks whose normalised residual exceeds this in size are flagged ``large_residual`` (three standard
#: deviations: common practice, no source).
LARGE_RESIDUAL = 3.0

#: The column roles of a picks table.
PICK_ROLES = ("shot_id", "station_id", "phase", "time_s", "uncertainty_s")

#: Column names looked for (case-insensitively) when a role is not mapped in ``[picks.columns]``.
_NAMES: dict[str, tuple[str, ...]] = {
    "shot_id": ("shot_id", "shot", "source_id", "source", "sp", "shotpoint"),
    "station_id": ("station_id", "station", "receiver_id", "receiver", "code", "rec"),
    "phase": ("phase", "phase_name", "phase_id", "arrival"),
    "time_s": ("time_s", "time", "t_s", "pick_s", "pick_time_s", "traveltime_s", "tt_s", "t"),
    "uncertainty_s": ("uncertainty_s", "uncertainty", "sigma_s", "sigma", "error_s", "error", "err_s", "unc_s"),
}

#: Columns of the checked picks table.
PICK_COLUMNS = ["row", "shot_id", "station_id", "phase", "phase_given", "time_s", "uncertainty_s", "status",
                "flags"]

#: Columns of the misfit table (``misfits.csv``).
MISFIT_COLUMNS = ["row", "shot_id", "station_id", "phase", "code", "phase_given", "offset_m", "line_offset_m",
                  "time_s", "uncertainty_s", "model_time_s", "residual_s", "normalised_residual", "model_status",
                  "status", "flags"]

PICK_STATUSES = ("ok", "unknown_shot", "unknown_station", "unknown_phase", "bad_time", "duplicate_pick",
                 "no_model_time")

#: IASPEI codes (lower case) → (wave, kind, role of the interface or None).  The codes are those of the
#: IASPEI standard seismic phase list (Storchak et al., 2003, Seismol. Res. Lett. 74(6), 761-772; as
#: recalled from memory); a code is accepted only where the model's roles give it back
#: (:meth:`LayeredModel.iaspei_label` of the translation equals the code).
IASPEI_CODES: dict[str, tuple[str, str, str | None]] = {
    "pg": ("P", "direct", None),
    "sg": ("S", "direct", None),
    "pb": ("P", "head", "conrad"),
    "sb": ("S", "head", "conrad"),
    "pn": ("P", "head", "moho"),
    "sn": ("S", "head", "moho"),
    "pmp": ("P", "reflection", "moho"),
    "sms": ("S", "reflection", "moho"),
}

_CODE_SPELLING = {"pg": "Pg", "sg": "Sg", "pb": "Pb", "sb": "Sb", "pn": "Pn", "sn": "Sn", "pmp": "PmP",
                  "sms": "SmS"}


# --------------------------------------------------------------------------- phases


def canonical_phase(text: str) -> str:
    """Our phase name in its short form: ``[S:]kind[:target]`` (the ``P:`` prefix dropped).

    Raises
    ------
    InputError
        When ``text`` is not a phase name (see :func:`geosect.model.phases.parse_phase`).

    Examples
    --------
    >>> canonical_phase("P:reflection:moho"), canonical_phase("s:Head:moho")
    ('reflection:moho', 'S:head:moho')
    """
    s = str(parse_phase(text))
    return s[2:] if s.startswith("P:") else s


def phase_label(phase: str, model: Any = None) -> str:
    """A label for figures and reports: ``'PmP (reflection:moho)'`` where the model gives a code, else the phase.

    >>> from geosect.model import LayeredModel
    >>> m = LayeredModel.flat([0, 35e3], [6000, 8000], names=["surface", "moho"])
    >>> phase_label("reflection:moho", m), phase_label("reflection:moho")
    ('PmP (reflection:moho)', 'reflection:moho')
    """
    code = _code(phase, model)
    return f"{code} ({phase})" if code else str(phase)


def _code(phase: str, model: Any) -> str | None:
    if model is None:
        return None
    try:
        return model.iaspei_label(phase)
    except Exception:  # noqa: BLE001 - a label is a nicety, never a failure
        return None


def _match_name(name: str, names: list[str]) -> str | None:
    """``name`` if the model has it, else its unique case-insensitive match, else None."""
    if name in names:
        return name
    hits = [n for n in names if n.lower() == name.lower()]
    return hits[0] if len(hits) == 1 else None


def translate_phase(text: str, model: Any = None) -> tuple[str | None, str]:
    """Our phase name for a phase as written in a picks file.

    Parameters
    ----------
    text : str
        Our phase name (``'reflection:moho'``, ``'S:head:moho'``, ``'direct'``) or an IASPEI code
        (``Pg, Pb, Pn, PmP, Sg, Sb, Sn, SmS``, read case-insensitively).
    model : LayeredModel, optional
        Translates IASPEI codes with its interface roles (``conrad``, ``moho``) and checks that named
        interfaces and layers exist (a unique case-insensitive match is accepted).  Without a model,
        IASPEI codes cannot be translated and names are not checked.

    Returns
    -------
    (phase, reason)
        ``phase`` is the short form of our phase name, or None when the text cannot be used; ``reason``
        is then a flag saying why (``unreadable_phase``, ``interface_not_in_model``,
        ``layer_not_in_model``, ``code_needs_model_roles``), else ``''``.

    Examples
    --------
    >>> from geosect.model import LayeredModel
    >>> m = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040], names=["surface", "conrad", "moho"])
    >>> translate_phase("PmP", m), translate_phase("Pb", m), translate_phase("head:Moho", m)
    (('reflection:moho', ''), ('head:conrad', ''), ('head:moho', ''))
    >>> translate_phase("PmP")
    (None, 'code_needs_model_roles')
    """
    raw = str(text).strip()
    key = raw.lower()
    if key in IASPEI_CODES:
        wave, kind, role = IASPEI_CODES[key]
        if model is None:
            return None, "code_needs_model_roles"
        target = None
        if role is not None:
            target = model.interface_with_role(role)
            if target is None:
                return None, "code_needs_model_roles"
        prefix = "S:" if wave == "S" else ""
        phase = f"{prefix}{kind}" + (f":{target}" if target is not None else "")
        if _code(phase, model) != _CODE_SPELLING[key]:
            return None, "code_needs_model_roles"
        return phase, ""
    try:
        ph = parse_phase(raw)
    except InputError:
        return None, "unreadable_phase"
    if model is not None and ph.target is not None:
        if ph.kind == "turning":
            found = _match_name(ph.target, list(model.layer_names))
            if found is None:
                return None, "layer_not_in_model"
        else:
            found = _match_name(ph.target, list(model.interface_names)[1:])
            if found is None:
                return None, "interface_not_in_model"
        ph = type(ph)(ph.wave, ph.kind, found)
    return canonical_phase(str(ph)), ""


def _canonical_series(values: pd.Series) -> pd.Series:
    """Short phase names of a column, computed once per distinct value; unreadable ones stay as they are."""
    uniq = pd.unique(values.astype(str))
    table = {}
    for u in uniq:  # a loop over distinct phase strings, not over rows
        try:
            table[u] = canonical_phase(u)
        except InputError:
            table[u] = u
    return values.astype(str).map(table)


# --------------------------------------------------------------------------- reading and checking


def _find_column(columns: list[str], role: str, mapping: dict, path: Path | None, required: bool) -> str | None:
    if role in mapping:
        name = mapping[role]
        if name not in columns:
            close = difflib.get_close_matches(name, columns, n=1)
            hint = f"did you mean '{close[0]}'? " if close else ""
            raise InputError(f"column '{name}' (mapped as {role}) is not in the file", file=path,
                             key=f"picks.columns.{role}",
                             fix=f"{hint}columns in the file: {', '.join(columns)}.")
        return name
    lower = {c.lower(): c for c in columns}
    for cand in _NAMES[role]:
        if cand in lower:
            return lower[cand]
    if required:
        raise InputError(f"no column for '{role}'", file=path, key=f"picks.columns.{role}",
                         fix=f"name the column {role}, or map it in the project file: [picks.columns] {role} = "
                             f"\"<column>\"; columns in the file: {', '.join(columns) or '(none)'}.")
    return None


def _ids(values: Iterable | None) -> set | None:
    if values is None:
        return None
    return set(pd.Series(list(values) if not isinstance(values, pd.Series) else values, dtype=object)
               .astype(str).str.strip())


def check_picks(frame: pd.DataFrame, *, columns: dict | None = None, model: Any = None,
                shot_ids: Iterable | None = None, station_ids: Iterable | None = None,
                default_uncertainty_s: float = DEFAULT_UNCERTAINTY_S, source: Path | None = None) -> pd.DataFrame:
    """Check a picks table (all values as read, strings or numbers) row by row.

    Parameters
    ----------
    frame : DataFrame
        One row per pick.
    columns : dict, optional
        Role → column name (``shot_id, station_id, phase, time_s, uncertainty_s``); roles not mapped are
        looked for under common names (``shot``, ``station``, ``time``, ``sigma``, ...).
    model : LayeredModel, optional
        Translates IASPEI codes and checks interface names (see :func:`translate_phase`).
    shot_ids, station_ids : iterable of str, optional
        The project's shot and station ids; picks naming others get ``unknown_shot`` /
        ``unknown_station``.  Not checked when None.
    default_uncertainty_s : float
        Uncertainty of picks without one, in seconds (default :data:`DEFAULT_UNCERTAINTY_S`).
    source : Path, optional
        The file, for messages.

    Returns
    -------
    DataFrame
        :data:`PICK_COLUMNS`, one row per input row in input order: ``row`` (1 = first data row), ids,
        ``phase`` (our short phase name; the text as given where it cannot be read), ``phase_given``,
        ``time_s`` and ``uncertainty_s`` in seconds, ``status``, ``flags``.

    Raises
    ------
    InputError
        When a mapped column is missing from the table, or a required role has no column.
    """
    if not (np.isfinite(default_uncertainty_s) and default_uncertainty_s > 0):
        raise InputError(f"default uncertainty {default_uncertainty_s!r} s is not a positive number",
                         key="default_uncertainty_s", fix="give a positive uncertainty in seconds, e.g. 0.05.")
    mapping = dict(columns or {})
    for role in mapping:
        if role not in PICK_ROLES:
            raise InputError(f"unknown column role '{role}'", file=source, key=f"picks.columns.{role}",
                             fix=f"roles: {', '.join(PICK_ROLES)}.")
    cols = [str(c) for c in frame.columns]
    df = frame.copy()
    df.columns = cols
    found = {r: _find_column(cols, r, mapping, source, r != "uncertainty_s") for r in PICK_ROLES}
    n = len(df)

    def text(role: str) -> pd.Series:
        s = df[found[role]].astype(str).str.strip()
        return s.where(~s.str.lower().isin(["nan", "none", "null"]), "").reset_index(drop=True)

    shot = text("shot_id")
    station = text("station_id")
    given = text("phase")
    status = pd.Series(["ok"] * n, dtype=object)
    flags = pd.Series([""] * n, dtype=object)

    # shots and stations
    flags = add_flag(flags, (shot == "").to_numpy(), "missing_shot_id")
    known_shots = _ids(shot_ids)
    bad_shot = (shot == "").to_numpy().copy()
    if known_shots is not None:
        bad_shot |= ~shot.isin(known_shots).to_numpy()
    status = set_status(status, bad_shot, "unknown_shot")
    flags = add_flag(flags, (station == "").to_numpy(), "missing_station_id")
    known_st = _ids(station_ids)
    bad_st = (station == "").to_numpy().copy()
    if known_st is not None:
        bad_st |= ~station.isin(known_st).to_numpy()
    status = set_status(status, bad_st, "unknown_station")

    # phases: translated once per distinct text
    table = {u: translate_phase(u, model) for u in pd.unique(given)}  # a loop over distinct phase strings
    phase = given.map({u: v[0] for u, v in table.items()})
    reason = given.map({u: v[1] for u, v in table.items()}).to_numpy(dtype=object)
    bad_phase = phase.isna().to_numpy()
    for why in sorted(set(reason[bad_phase])):  # a loop over the few kinds of reason
        flags = add_flag(flags, bad_phase & (reason == why), why)
    status = set_status(status, bad_phase, "unknown_phase")
    phase = phase.where(~bad_phase, given)

    # times
    t, t_bad = _numbers(df[found["time_s"]].reset_index(drop=True))
    t_missing = ~np.isfinite(t) & ~t_bad
    with np.errstate(invalid="ignore"):
        t_neg = np.isfinite(t) & (t < 0)
    flags = add_flag(flags, t_bad, "time_not_a_number")
    flags = add_flag(flags, t_missing, "time_missing")
    flags = add_flag(flags, t_neg, "negative_time")
    status = set_status(status, t_bad | t_missing | t_neg, "bad_time")
    t = np.where(np.isfinite(t) & ~t_neg, t, np.nan)

    # uncertainties
    unc = np.full(n, float(default_uncertainty_s))
    if found["uncertainty_s"] is not None:
        u, u_bad = _numbers(df[found["uncertainty_s"]].reset_index(drop=True))
        with np.errstate(invalid="ignore"):
            u_nonpos = np.isfinite(u) & (u <= 0)
        u_empty = ~np.isfinite(u) & ~u_bad
        flags = add_flag(flags, u_bad | u_nonpos, "bad_uncertainty")
        flags = add_flag(flags, u_empty, "default_uncertainty")
        unc = np.where(np.isfinite(u) & ~u_nonpos, u, unc)

    # duplicates among the rows that are otherwise usable
    key = pd.DataFrame({"a": shot, "b": station, "c": phase})
    ok = (status == "ok").to_numpy()
    dup_later = np.zeros(n, bool)
    dup_first = np.zeros(n, bool)
    if ok.any():
        k_ok = key[ok]
        later = k_ok.duplicated(keep="first").to_numpy()
        any_dup = k_ok.duplicated(keep=False).to_numpy()
        idx = np.flatnonzero(ok)
        dup_later[idx[later]] = True
        dup_first[idx[any_dup & ~later]] = True
    flags = add_flag(flags, dup_later | dup_first, "duplicate_pick")
    status = set_status(status, dup_later, "duplicate_pick")

    return pd.DataFrame({
        "row": np.arange(1, n + 1), "shot_id": shot, "station_id": station, "phase": phase.astype(object),
        "phase_given": given, "time_s": t, "uncertainty_s": unc, "status": status, "flags": flags,
    })[PICK_COLUMNS]


def read_picks(path: str | Path, *, columns: dict | None = None, delimiter: str | None = None, model: Any = None,
               shot_ids: Iterable | None = None, station_ids: Iterable | None = None,
               default_uncertainty_s: float = DEFAULT_UNCERTAINTY_S) -> pd.DataFrame:
    """Read and check a picks table (CSV or TSV).

    Parameters
    ----------
    path : str or Path
        The table: ``.csv``, ``.tsv``, ``.txt`` or ``.dat``; the separator is guessed unless ``delimiter``
        is given.  Times and uncertainties in seconds.
    columns, model, shot_ids, station_ids, default_uncertainty_s
        See :func:`check_picks`.
    delimiter : str, optional
        Column separator.

    Returns
    -------
    DataFrame
        :data:`PICK_COLUMNS`, one row per data row of the file (see :func:`check_picks`).

    Raises
    ------
    InputError
        For a file that is not a table or cannot be read, or missing columns.
    """
    path = Path(path)
    if path.suffix.lower() not in TABLE_SUFFIXES:
        raise InputError(f"'{path.suffix}' is not a table format for picks", file=path, key="picks.file",
                         fix="write the picks as a CSV or TSV table (.csv, .tsv, .txt) with columns shot_id, "
                             "station_id, phase, time_s and optionally uncertainty_s.")
    df = read_frame(path, delimiter=delimiter, key="picks.file")
    return check_picks(df, columns=columns, model=model, shot_ids=shot_ids, station_ids=station_ids,
                       default_uncertainty_s=default_uncertainty_s, source=path)


# --------------------------------------------------------------------------- misfits


def reduced_time(time_s, distance_m, reduction_velocity_ms: float) -> np.ndarray:
    """Reduced time ``t − |x| / v_red``, seconds, vectorised.

    Parameters
    ----------
    time_s : array_like
        Travel times, s.
    distance_m : array_like
        Source-receiver distance (signed or not), m.
    reduction_velocity_ms : float
        Reduction velocity, m/s.

    >>> float(reduced_time(20.0, -80e3, 8000.0))
    10.0
    """
    if not (np.isfinite(reduction_velocity_ms) and reduction_velocity_ms > 0):
        raise InputError(f"reduction velocity {reduction_velocity_ms!r} m/s is not positive",
                         key="picks.reduction_velocity_kms", fix="give a positive velocity, e.g. 8.0 km/s.")
    return np.asarray(time_s, float) - np.abs(np.asarray(distance_m, float)) / float(reduction_velocity_ms)


def misfits(picks: pd.DataFrame, model_times: pd.DataFrame | None, *, model: Any = None,
            large_residual: float = LARGE_RESIDUAL) -> pd.DataFrame:
    """Join checked picks with the model's times: residuals, normalised residuals and statuses.

    Parameters
    ----------
    picks : DataFrame
        From :func:`read_picks` / :func:`check_picks`.
    model_times : DataFrame or None
        Model times per pair and phase, at least ``shot_id, station_id, phase, time_s, status`` and, when
        available, ``offset_m, line_offset_m`` (the rays table).  Phases are compared in their short form,
        so ``'P:direct'`` matches ``'direct'``.
    model : LayeredModel, optional
        Gives the IASPEI ``code`` column.
    large_residual : float
        Usable picks with ``|residual / uncertainty|`` above this are flagged ``large_residual``.

    Returns
    -------
    DataFrame
        :data:`MISFIT_COLUMNS`, one row per pick in the order of ``picks``: ``model_time_s`` (s),
        ``residual_s`` = pick − model (s), ``normalised_residual`` = residual / uncertainty,
        ``model_status`` (the status of the model's ray: ``ok``, ``no_ray``, ..., or ``not_computed`` when
        the model table has no row for the pick).  A usable pick without a model time gets the status
        ``no_model_time``; residuals are NaN for every pick that is not ``ok``.
    """
    key = ["shot_id", "station_id", "phase"]
    keep = ["offset_m", "line_offset_m"]
    if model_times is None or len(model_times) == 0:
        mt = pd.DataFrame(columns=key + keep + ["model_time_s", "model_status"])
    else:
        cols = key + [c for c in keep if c in model_times.columns] + ["time_s", "status"]
        mt = model_times[cols].copy()
        mt["shot_id"] = mt["shot_id"].astype(str)
        mt["station_id"] = mt["station_id"].astype(str)
        mt["phase"] = _canonical_series(mt["phase"])
        mt = mt.rename(columns={"time_s": "model_time_s", "status": "model_status"})
        # a usable time wins over a row without one when the table repeats a pair and phase
        mt["_rank"] = (mt["model_status"] != "ok").astype(int)
        mt = mt.sort_values("_rank", kind="stable").drop_duplicates(key, keep="first").drop(columns="_rank")
        for c in keep:
            if c not in mt.columns:
                mt[c] = np.nan
    left = picks.copy()
    left["phase"] = left["phase"].astype(str)
    m = left.merge(mt, how="left", on=key, validate="many_to_one", sort=False)
    m["model_status"] = m["model_status"].where(m["model_status"].notna(), "not_computed").astype(object)
    mtime = pd.to_numeric(m["model_time_s"], errors="coerce").to_numpy(float)
    mtime = np.where(m["model_status"].to_numpy() == "ok", mtime, np.nan)
    status = m["status"].astype(object).copy()
    usable = status.to_numpy() == "ok"
    no_time = usable & ~np.isfinite(mtime)
    status[no_time] = "no_model_time"
    ok = usable & ~no_time
    t = m["time_s"].to_numpy(float)
    unc = m["uncertainty_s"].to_numpy(float)
    res = np.where(ok, t - mtime, np.nan)
    with np.errstate(invalid="ignore", divide="ignore"):
        z = np.where(ok, res / unc, np.nan)
    flags = add_flag(m["flags"].astype(object), ok & (np.abs(np.nan_to_num(z)) > large_residual),
                     "large_residual")
    codes_tab = {p: (_code(p, model) or "") for p in pd.unique(m["phase"])}  # distinct phases only
    out = pd.DataFrame({
        "row": m["row"].to_numpy(), "shot_id": m["shot_id"], "station_id": m["station_id"], "phase": m["phase"],
        "code": m["phase"].map(codes_tab).where(~m["status"].isin(["unknown_phase"]), ""),
        "phase_given": m["phase_given"],
        "offset_m": pd.to_numeric(m["offset_m"], errors="coerce").to_numpy(float),
        "line_offset_m": pd.to_numeric(m["line_offset_m"], errors="coerce").to_numpy(float),
        "time_s": t, "uncertainty_s": unc, "model_time_s": np.where(usable, mtime, np.nan), "residual_s": res,
        "normalised_residual": z, "model_status": m["model_status"], "status": status, "flags": flags,
    })
    return out[MISFIT_COLUMNS].reset_index(drop=True)


def summarise_misfits(table: pd.DataFrame, *, model: Any = None) -> pd.DataFrame:
    """Per phase (and for all phases together): count, mean residual, RMS, chi-square per pick, largest residual.

    Only picks with status ``ok`` count.  For the ``N`` picks of a phase with residuals ``r_i`` (s) and
    uncertainties ``σ_i`` (s):

    * ``mean_residual_s`` = Σ r_i / N;
    * ``rms_s`` = sqrt(Σ r_i² / N);
    * ``chi2_per_pick`` = Σ (r_i / σ_i)² / N, the reduced chi-square with N degrees of freedom (the model
      is not fitted to the picks); about 1 when the residuals match their uncertainties;
    * ``max_abs_residual_s`` = max |r_i|.

    Returns
    -------
    DataFrame
        ``phase, label, picks, mean_residual_s, rms_s, chi2_per_pick, max_abs_residual_s``; one row per
        phase in order of first appearance, then ``phase = 'all'``.
    """
    ok = table[table["status"] == "ok"]
    r = ok["residual_s"].to_numpy(float)
    z = ok["normalised_residual"].to_numpy(float)
    phases = list(pd.unique(ok["phase"]))
    code = pd.Categorical(ok["phase"], categories=phases).codes
    n = np.bincount(code, minlength=len(phases)).astype(float)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.bincount(code, weights=r, minlength=len(phases)) / n
        rms = np.sqrt(np.bincount(code, weights=r * r, minlength=len(phases)) / n)
        chi2 = np.bincount(code, weights=z * z, minlength=len(phases)) / n
    mx = pd.Series(np.abs(r)).groupby(code).max().reindex(range(len(phases))).to_numpy(float)
    rows = pd.DataFrame({"phase": phases, "label": [phase_label(p, model) for p in phases],
                         "picks": n.astype(int), "mean_residual_s": mean, "rms_s": rms, "chi2_per_pick": chi2,
                         "max_abs_residual_s": mx})
    tot = len(r)
    with np.errstate(invalid="ignore", divide="ignore"):
        all_row = {"phase": "all", "label": "all phases", "picks": tot,
                   "mean_residual_s": float(r.mean()) if tot else np.nan,
                   "rms_s": float(np.sqrt((r * r).mean())) if tot else np.nan,
                   "chi2_per_pick": float((z * z).mean()) if tot else np.nan,
                   "max_abs_residual_s": float(np.abs(r).max()) if tot else np.nan}
    return pd.concat([rows, pd.DataFrame([all_row])], ignore_index=True)


def largest_residuals(table: pd.DataFrame, n: int = 10) -> pd.DataFrame:
    """The ``n`` usable picks with the largest ``|normalised residual|``, largest first."""
    ok = table[table["status"] == "ok"]
    order = np.argsort(-np.abs(ok["normalised_residual"].to_numpy(float)), kind="stable")
    return ok.iloc[order[:n]].reset_index(drop=True)
