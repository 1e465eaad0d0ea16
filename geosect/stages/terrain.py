"""Stage: topography along the section line, sampled from the DEM."""

from __future__ import annotations

import numpy as np

from ..along import topography
from ..pipeline import Context, register

__all__ = ["sample_topography"]


@register("topography", "sampling the DEM along the line", needs=("line", "dem"), provides=("topography",),
          in_check=True)
def sample_topography(ctx: Context) -> None:
    s = ctx.settings
    topo = topography(ctx.artefacts["line"], s.dem.file, ctx.artefacts["crs"].crs,
                      spacing_m=s.section.sample_spacing_m, band=s.dem.band)
    ctx.artefacts["topography"] = topo
    ok = np.isfinite(topo["elevation_m"])
    sec = ctx.report.section("Topography along the line")
    sec.kv({"samples": f"{len(topo)} every {np.diff(topo['chainage_m'][:2])[0]:.0f} m"
            if len(topo) > 1 else str(len(topo)),
            "elevation": f"{topo.loc[ok, 'elevation_m'].min():.0f} to {topo.loc[ok, 'elevation_m'].max():.0f} m "
                         f"above the {s.dem.height_reference}" if ok.any() else "no DEM coverage",
            "without DEM coverage": f"{int((~ok).sum())} samples"})
