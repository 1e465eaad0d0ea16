"""The build stages, registered in build order by importing their modules."""

from . import inputs, placing  # noqa: F401  (reading, line, placing)
from . import terrain  # noqa: F401,E402  (topography along the line)
from . import cmp  # noqa: F401,E402  (CMP bins)
from . import rays  # noqa: F401,E402  (the model; travel times and reflection points)
from . import coverage  # noqa: F401,E402  (coverage per interface, survey design, planned layouts)
from . import picks  # noqa: F401,E402  (travel-time picks against the model; misfits)
from . import section  # noqa: F401,E402  (the depth section)
from . import webmap  # noqa: F401,E402  (the linked map page)
from . import geometry  # noqa: F401,E402  (last: assembles geometry.gpkg from what the others produced)
