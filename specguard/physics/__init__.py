"""specguard.physics: the formulas, as a leaf package.

SI floats or numpy arrays in, SI out (absolute temperatures in kelvin).  Imports only
numpy and the standard library; knows nothing of YAML, configuration or findings.
Each public function is one published (or derived and documented) relation; its
docstring gives units, the equation, assumptions, validity limits and the source,
with the provenance tags of docs/physics.md §0.1.

Modules: hbridge (§1), threephase (§2), rms (§3), operating (§4), inductance (§5.2-5.3),
eddy (§2.4, §5.4), thermal (§6), control (§4.5, §7.2-7.3, §7.8), choke (§7.5),
braking (§7.6), consistency (§4.4), audible (§7.1), remedies (inverse problems).
"""

from specguard.physics import (
    audible,
    braking,
    choke,
    consistency,
    control,
    eddy,
    hbridge,
    inductance,
    operating,
    remedies,
    rms,
    thermal,
    threephase,
)
from specguard.physics.audible import *  # noqa: F403
from specguard.physics.braking import *  # noqa: F403
from specguard.physics.choke import *  # noqa: F403
from specguard.physics.consistency import *  # noqa: F403
from specguard.physics.control import *  # noqa: F403
from specguard.physics.eddy import *  # noqa: F403
from specguard.physics.hbridge import *  # noqa: F403
from specguard.physics.inductance import *  # noqa: F403
from specguard.physics.operating import *  # noqa: F403
from specguard.physics.remedies import *  # noqa: F403
from specguard.physics.rms import *  # noqa: F403
from specguard.physics.thermal import *  # noqa: F403
from specguard.physics.threephase import *  # noqa: F403

MODULES = (
    audible,
    braking,
    choke,
    consistency,
    control,
    eddy,
    hbridge,
    inductance,
    operating,
    remedies,
    rms,
    thermal,
    threephase,
)

__all__ = ["MODULES"] + [name for module in MODULES for name in module.__all__]
