"""The build stages, registered in build order by importing their modules."""

from . import inputs, placing  # noqa: F401
