"""geosect: crooked-line seismic profiles, from field geometry to depth sections."""

__version__ = "0.1.0"
