"""Layered velocity models, exact 1D travel times, Fresnel zones and the model file.

The public pieces:

* :class:`LayeredModel` (1D or 2D, named interfaces, topography on top) and
  its parts :class:`Interface`, :class:`Layer`;
* :func:`parse_phase`, :class:`Phase`, :func:`iaspei_label`;
* :class:`RaySolution`, returned by :meth:`LayeredModel.solve`;
* :func:`read_model`, :func:`write_model` (the TOML model file);
* :func:`fresnel_radius`, :func:`fresnel_zone`;
* :func:`sample_model_toml` (the invented sample project's model).
"""

from geosect.model.fresnel import FresnelZone, fresnel_radius, fresnel_semi_axes, fresnel_zone
from geosect.model.layered import LINE_SIGNATURE_KEYS, Interface, Layer, LayeredModel
from geosect.model.modelfile import model_from_toml, model_to_toml, read_model, write_model
from geosect.model.oned import STATUS_CODES, RaySolution
from geosect.model.phases import Phase, iaspei_label, parse_phase
from geosect.model.sample import sample_model, sample_model_toml

__all__ = [
    "LayeredModel",
    "Interface",
    "Layer",
    "LINE_SIGNATURE_KEYS",
    "RaySolution",
    "STATUS_CODES",
    "Phase",
    "parse_phase",
    "iaspei_label",
    "read_model",
    "write_model",
    "model_to_toml",
    "model_from_toml",
    "fresnel_radius",
    "fresnel_zone",
    "fresnel_semi_axes",
    "FresnelZone",
    "sample_model",
    "sample_model_toml",
]
