"""Stages: topography along the line, and the depth-section figure (section.png, .svg, .pdf)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..along import compass, cut_polygons, line_crossings, project_points
from ..pipeline import Context, register
from ..report import md_escape

__all__ = ["section_data", "draw_section_figure"]


def _geology(ctx: Context) -> pd.DataFrame:
    g = ctx.artefacts.get("geology")
    if g is None:
        return pd.DataFrame(columns=["start_m", "end_m", "unit", "age", "color"])
    from ..plot.colours import geology_colours

    g = g[g["status"] == "ok"]
    out = cut_polygons(ctx.artefacts["line"], g, ["unit", "age", "color"])
    # one colour per unit, decided once here (in order along the line) and shared by the section and the map
    colours = geology_colours(list(out["unit"]) + list(g["unit"]), list(out["age"]) + list(g["age"]),
                              list(out["color"]) + list(g["color"]), mode=ctx.settings.section.geology_colours)
    ctx.artefacts["geology_colours"] = colours
    out["color"] = out["unit"].map(colours)
    return out


def _faults(ctx: Context) -> pd.DataFrame:
    from ..plot.section import apparent_dip_deg

    f = ctx.artefacts.get("faults")
    cols = ["chainage_m", "name", "apparent_dip_deg", "dips_toward"]
    if f is None:
        return pd.DataFrame(columns=cols)
    line = ctx.artefacts["line"]
    x = line_crossings(line, f[f["status"] == "ok"], ["name", "strike", "dip"])
    if not len(x):
        return pd.DataFrame(columns=cols)
    az = line.azimuth(x["chainage_m"].to_numpy())
    app, toward = apparent_dip_deg(x["dip"].to_numpy(float), x["strike"].to_numpy(float), az)
    x["apparent_dip_deg"] = app
    x["dips_toward"] = toward
    return x[cols + ["strike", "dip"]]


def _points(ctx: Context, name: str) -> pd.DataFrame:
    f = ctx.artefacts.get(f"placed_{name}")
    if f is None:
        return pd.DataFrame()
    f = f[np.isfinite(f["chainage_m"])].copy()  # rows with a status other than ok are drawn hollow
    elev = f["elevation_m"].where(np.isfinite(f["elevation_m"]), f["dem_elevation_m"])
    out = pd.DataFrame({"id": f["id"], "chainage_m": f["chainage_m"], "elevation_m": elev,
                        "crossline_m": f["crossline_m"], "kind": f.get("kind", ""), "status": f["status"]})
    if name == "shots":
        out["depth_m"] = f["depth_m"].fillna(0.0)
    return out.reset_index(drop=True)


def _hypocentres(ctx: Context) -> pd.DataFrame:
    h = ctx.artefacts.get("hypocentres")
    if h is None:
        return pd.DataFrame(columns=["chainage_m", "depth_m", "magnitude", "crossline_m"])
    h = h[h["status"] == "ok"]
    ch, xl, inside = project_points(ctx.artefacts["line"], h["easting"], h["northing"],
                                    ctx.settings.section.swath_km * 1e3)
    return pd.DataFrame({"chainage_m": ch[inside], "depth_m": h["depth_km"].to_numpy()[inside] * 1e3,
                         "magnitude": h["magnitude"].to_numpy()[inside], "crossline_m": xl[inside]})


def _horizons(ctx: Context) -> list:
    from ..io.horizons import project_map_lines, read_horizon_table, sample_depth_grid
    from ..plot.section import Horizon

    s = ctx.settings
    line = ctx.artefacts["line"]
    crs = ctx.artefacts["crs"].crs
    model = ctx.artefacts.get("model")
    out = []
    sec = ctx.report.section("Interpreted horizons")
    for i, h in enumerate(s.horizons):
        key = f"horizons[{i}]"
        note = ""
        if h.kind in ("chainage-depth", "chainage-twt"):
            smp = read_horizon_table(h.file, h.kind, h.columns, key)
            if h.kind == "chainage-twt":
                if model is None:
                    sec.text(f"{md_escape(h.name)}: given in two-way time, not drawn (no velocity model).")
                    continue
                smp.depth_m = model.vertical_twt_to_depth(smp.chainage_m, smp.twt_s)
                note = "converted from two-way time with the model's velocities along vertical rays"
        elif h.kind == "depth-grid":
            smp = sample_depth_grid(h.file, line, crs)
            note = "sampled from a depth grid along the line"
        else:
            swath = (h.swath_km if h.swath_km is not None else s.section.swath_km) * 1e3
            smp = project_map_lines(h.file, h.layer, line, crs, swath, h.columns, key)
            note = f"map lines within ±{swath / 1e3:g} km projected onto the line"
        out.append(Horizon(name=h.name, chainage_m=smp.chainage_m, depth_m=smp.depth_m,
                           uncertainty_m=smp.uncertainty_m, source=h.kind, note=note, color=h.color,
                           linestyle=h.linestyle))
        ok = np.isfinite(smp.depth_m)
        sec.bullets([f"{md_escape(h.name)} ({h.kind}): {int(ok.sum())} samples"
                     + (f", chainage {smp.chainage_m[ok].min() / 1e3:.1f}–{smp.chainage_m[ok].max() / 1e3:.1f} km"
                        if ok.any() else "") + (f"; {note}" if note else "")
                     + (f"; {smp.n_bad_rows} rows without numbers skipped" if smp.n_bad_rows else "")])
    return out


_ROLE_LABELS = {"moho": "Moho", "conrad": "mid-crustal boundary"}


def _model_parts(ctx: Context, topo: pd.DataFrame | None):
    """Interfaces and the velocity grid of the model, along the section."""
    from ..plot.section import Interface, VelocityGrid

    model = ctx.artefacts.get("model")
    if model is None:
        return [], None
    line = ctx.artefacts["line"]
    ch = np.linspace(0.0, line.length, 801)
    interfaces = []
    for name in model.interface_names[1:]:  # the first is the top surface
        interfaces.append(Interface(name=name, label=_ROLE_LABELS.get(model.role_of(name)), chainage_m=ch,
                                    depth_m=np.asarray(model.interface_depth(name, ch), float)))
    zmax = ctx.settings.section.depth_max_km
    bottom = np.nanmax([np.nanmax(i.depth_m) for i in interfaces]) if interfaces else 40e3
    zb = zmax * 1e3 if zmax is not None else 1.2 * bottom
    z = np.linspace(ctx.settings.section.depth_min_km * 1e3, zb, 301)
    CH, Z = np.meshgrid(ch, z)
    vp = np.asarray(model.velocity(CH.ravel(), Z.ravel()), float).reshape(Z.shape)
    if topo is not None and len(topo):
        surf = -np.interp(ch, topo["chainage_m"], np.nan_to_num(topo["elevation_m"], nan=0.0))
        vp[Z < surf[None, :]] = np.nan
    return interfaces, VelocityGrid(chainage_m=ch, depth_m=z, vp_ms=vp)


def section_data(ctx: Context):
    """Assemble the plain data the section figure draws."""
    from ..plot.section import RayPath, SectionData

    s = ctx.settings
    line = ctx.artefacts["line"]
    topo = ctx.artefacts.get("topography")
    az0, az1 = float(line.azimuth(np.array([0.0]))[0]), float(line.azimuth(np.array([line.length]))[0])
    bch, bang = line.bends(s.line.bend_threshold_deg)
    interfaces, vgrid = _model_parts(ctx, topo)
    rp = ctx.artefacts.get("reflection_points")
    paths = ctx.artefacts.get("ray_paths") or []
    caption = [f"Chainage along the section line ({line.length / 1e3:.1f} km, grid distance in "
               f"{ctx.artefacts['crs'].name})."]
    if ctx.artefacts.get("hypocentres") is not None:
        caption.append(f"Earthquakes within ±{s.section.swath_km:g} km of the line projected perpendicular onto it.")
    return SectionData(
        title=s.project.name,
        line_length_m=line.length,
        start_label=compass((az0 + 180) % 360), end_label=compass(az1),
        start_azimuth_deg=az0, end_azimuth_deg=az1,
        topo_chainage_m=topo["chainage_m"].to_numpy() if topo is not None else np.empty(0),
        topo_elevation_m=topo["elevation_m"].to_numpy() if topo is not None else np.empty(0),
        geology=_geology(ctx), faults=_faults(ctx), interfaces=interfaces, velocity=vgrid,
        rays=[RayPath(**p) for p in paths],
        reflection_points=rp[["phase", "point_chainage_m", "point_depth_m", "fresnel_inline_m"]].rename(
            columns={"point_chainage_m": "chainage_m", "point_depth_m": "depth_m"}) if rp is not None and len(rp)
        else pd.DataFrame(columns=["phase", "chainage_m", "depth_m", "fresnel_inline_m"]),
        horizons=_horizons(ctx),
        stations=_points(ctx, "stations"), shots=_points(ctx, "shots"),
        bends=pd.DataFrame({"chainage_m": bch, "angle_deg": bang}),
        hypocentres=_hypocentres(ctx),
        swath_m=s.section.swath_km * 1e3,
        caption=" ".join(caption),
    )


@register("section", "drawing the depth section", needs=("line",), provides=("section_files",))
def draw_section_figure(ctx: Context) -> None:
    from ..plot.section import SectionOptions, save_section

    s = ctx.settings.section
    data = section_data(ctx)
    ctx.artefacts["section_data"] = data
    opts = SectionOptions(depth_min_km=s.depth_min_km, depth_max_km=s.depth_max_km, exaggeration=s.exaggeration,
                          size=s.size, phases=s.phases, show_rays=s.show_rays, max_rays=s.max_rays,
                          topo_panel=s.topo_panel and len(data.topo_chainage_m) > 0,
                          topo_exaggeration=s.topo_exaggeration,
                          colormap=s.colormap or SectionOptions().colormap,
                          geology_colours="column")  # colours were chosen in _geology()
    files = save_section(data, ctx.out_dir, opts)
    for f in files:
        ctx.output(f.name)
    ctx.artefacts["section_files"] = files
    sec = ctx.report.section("Depth section")
    sec.kv({"files": ", ".join(f.name for f in files), "size": s.size,
            "vertical exaggeration": f"{s.exaggeration:g}",
            "drawn": f"{len(data.stations)} stations, {len(data.shots)} shots, {len(data.interfaces)} interfaces, "
                     f"{len(data.horizons)} horizons, {len(data.hypocentres)} earthquakes within "
                     f"±{s.swath_km:g} km, {len(data.geology)} geology intervals, {len(data.faults)} fault crossings"})
