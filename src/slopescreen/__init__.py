"""slopescreen: regional shallow-landslide screening.

The physics modules (strength, stability, inverse, envelope) import only numpy and the
standard library, so they run wherever a spreadsheet's Python runs. The shell and the map
engine are thin layers over them.
"""

from slopescreen.envelope import EnvelopeFit, fit_direct_shear, fit_envelope
from slopescreen.errors import InputError
from slopescreen.inverse import (
    critical_depth,
    critical_saturation,
    critical_slope_deg,
    required_cohesion_kpa,
    required_friction_deg,
)
from slopescreen.stability import SlipPlaneStresses, factor_of_safety, slip_plane_stresses
from slopescreen.strength import (
    MohrCircle,
    PlaneStresses,
    effective_stress_kpa,
    failure_plane_angle_deg,
    failure_plane_stresses,
    mohr_circle,
    plane_stresses,
    principal_stress_at_failure_kpa,
    shear_strength_kpa,
)

__version__ = "0.2.0"

__all__ = [
    "EnvelopeFit",
    "InputError",
    "MohrCircle",
    "PlaneStresses",
    "SlipPlaneStresses",
    "__version__",
    "critical_depth",
    "critical_saturation",
    "critical_slope_deg",
    "effective_stress_kpa",
    "factor_of_safety",
    "failure_plane_angle_deg",
    "failure_plane_stresses",
    "fit_direct_shear",
    "fit_envelope",
    "mohr_circle",
    "plane_stresses",
    "principal_stress_at_failure_kpa",
    "required_cohesion_kpa",
    "required_friction_deg",
    "shear_strength_kpa",
    "slip_plane_stresses",
]
