"""mergecheck: checks an entrance ramp's acceleration lane and merge.

The public interface (documented in the README, "Python"): load or build a site, assess it, run a batch or a
sweep, and read the results as plain data or as documents::

    >>> import mergecheck
    >>> site = mergecheck.load_site("examples/willowmere-level.yaml")  # doctest: +SKIP
    >>> mergecheck.assess(site).verdict  # doctest: +SKIP
    'meets'

The core is pure functions on SI floats and numpy arrays; units live only at
the edges (:mod:`mergecheck.units`). Everything not named in ``__all__`` is
internal and may change.
"""

from .api import *  # noqa: F403  (the functions named in api.__all__)
from .api import __all__ as _public
from .assessment import SiteAssessment, SiteCheck, VehicleAssessment, VehicleCurves
from .batch import BatchResult
from .errors import InputError
from .site import Site
from .sweep import Sweep

__version__ = "0.1.0"

__all__ = [
    "BatchResult",
    "InputError",
    "Site",
    "SiteAssessment",
    "SiteCheck",
    "Sweep",
    "VehicleAssessment",
    "VehicleCurves",
    "__version__",
]
__all__ += _public
