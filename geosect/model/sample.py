"""The sample project's velocity model (synthetic): a crust thickening under an invented belt.

:func:`sample_model_toml` writes the 2D model of the invented Tarvanne Range
transect in geosect's model-file layout (see ``docs/model-file.md``).  Every
number is invented; the structure is a plausible sketch of a collisional belt:

* topography on top (``surface = "dem"``);
* an upper crust with a vertical gradient and a lateral change (lower
  velocities under the foreland at the start of the line, higher in the belt);
* a mid-crustal boundary (role ``conrad``) that deepens under the belt;
* a lower crust;
* a crust-mantle boundary (role ``moho``) at about 32 km on the foreland side,
  stepping down on a steep ramp near the middle of the line to about 50 km
  under the belt;
* a vp/vs ratio per layer.

Node chainages scale with the line length, so the model fits any sample line.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from geosect.errors import InputError
from geosect.model.layered import LINE_SIGNATURE_KEYS, Interface, Layer, LayeredModel
from geosect.model.modelfile import model_to_toml

__all__ = ["sample_model", "sample_model_toml"]

_HEADER = """\
SYNTHETIC velocity model of the invented Tarvanne Range transect (geosect sample project).
Every name and number in this file is invented; it is not a model of any real place.
Layout: geosect model file, km and km/s (see docs/model-file.md).
Layers top to bottom: upper crust (vertical gradient, faster in the belt), lower crust,
mantle half-space. The Moho steps from about 32 km under the foreland to about 50 km
under the belt on a steep ramp near the middle of the line."""

# (fraction of the line length, depth km)
_CONRAD = ((0.0, 16.0), (0.35, 17.0), (0.6, 22.0), (1.0, 21.0))
_MOHO = ((0.0, 32.0), (0.3, 32.5), (0.46, 34.0), (0.54, 47.0), (0.7, 50.0), (1.0, 48.5))
# upper crust: (fraction, vp top km/s, vp bottom km/s)
_UPPER = ((0.0, 5.5, 6.15), (0.5, 5.9, 6.25), (1.0, 5.7, 6.2))
_LOWER = ((0.0, 6.5, 6.9), (1.0, 6.6, 7.0))


def _nodes(frac, length_km: float) -> np.ndarray:
    """Chainages in metres, rounded to whole metres."""
    return np.round(np.asarray(frac, float) * length_km * 1000.0)


def sample_model(line_length_km: float, line_signature: Mapping | None = None) -> LayeredModel:
    """The sample project's 2D model as a :class:`LayeredModel` (SI units).

    Parameters
    ----------
    line_length_km : float
        Length of the sample section line, km; the nodes scale with it.
    line_signature : mapping, optional
        The line's ``start_e, start_n, end_e, end_n`` (m) and ``length_m``, to
        record in the model.
    """
    try:
        length = float(line_length_km)
    except (TypeError, ValueError):
        length = float("nan")
    if not (np.isfinite(length) and length > 0):
        raise InputError(f"line length {line_length_km!r} km is not a positive number",
                         key="line_length_km", fix="pass the section line's length in km")
    if line_signature is not None:
        missing = [k for k in LINE_SIGNATURE_KEYS if k not in line_signature]
        if missing:
            raise InputError(f"the line signature lacks {', '.join(missing)}",
                             key="line_signature",
                             fix=f"pass all of {', '.join(LINE_SIGNATURE_KEYS)} (metres)")
    c_ch, c_z = zip(*_CONRAD)
    m_ch, m_z = zip(*_MOHO)
    u_ch, u_top, u_bot = zip(*_UPPER)
    l_ch, l_top, l_bot = zip(*_LOWER)
    interfaces = [
        Interface("surface", [0.0], [0.0]),
        Interface("conrad", _nodes(c_ch, length), np.array(c_z) * 1000.0, role="conrad"),
        Interface("moho", _nodes(m_ch, length), np.array(m_z) * 1000.0, role="moho"),
    ]
    layers = [
        Layer("upper crust", np.array(u_top) * 1000.0, np.array(u_bot) * 1000.0,
              chainage_m=_nodes(u_ch, length), vpvs=1.72),
        Layer("lower crust", np.array(l_top) * 1000.0, np.array(l_bot) * 1000.0,
              chainage_m=_nodes(l_ch, length), vpvs=1.77),
        Layer("mantle", 8050.0, None, vp_gradient_per_s=0.001, vpvs=1.78),
    ]
    return LayeredModel(interfaces, layers, top="dem", line_signature=line_signature,
                        name="Tarvanne transect (synthetic)",
                        note="synthetic sample model; every number is invented")


def sample_model_toml(line_length_km: float, line_signature: Mapping | None = None) -> str:
    """The sample project's 2D model as model-file text (TOML, km and km/s).

    Parameters
    ----------
    line_length_km : float
        Length of the sample section line, km.
    line_signature : mapping or None
        ``start_e, start_n, end_e, end_n`` (m) and ``length_m`` of the line,
        written as the model's ``[section_line]``; None writes none.

    Returns
    -------
    str
        The file text, starting with a comment that says it is synthetic.

    Examples
    --------
    >>> text = sample_model_toml(205.0, None)
    >>> text.splitlines()[0].startswith("# SYNTHETIC")
    True
    """
    return model_to_toml(sample_model(line_length_km, line_signature), comment=_HEADER)
