"""Pure physics of permanent-magnet DC motors and gearheads, in SI units.

Numpy only (no pint, duckdb or pandas import).  Every function takes
floats, numpy arrays or pandas Series, broadcasts with numpy rules and
returns a float for scalar input, otherwise an ndarray (a Series when the
result has the shape of a Series argument; Series are used positionally,
never index-aligned).  Angles in rad, speeds in rad/s, temperatures in K.
Missing data (NaN) propagates to NaN results without warnings.

Modules
-------
motor            constants of the linear motor model (forward relations)
operating_point  speed/torque/current/voltage at a point, efficiency, power
inverse_line     inverse relations on the speed-torque line
inverse_constants inverse relations for R, Kt, J, L, efficiency
inverse_ratings  inverse relations of the maximum-efficiency, maximum-power and nominal points
temperature      copper R(T), magnet Kt(T), insulation classes
thermal          two-node thermal network: steady state, closed forms
transient        two-node network: exact transient and periodic duty
network          two-node network under a loss profile; the hot fixed point
hot_network      two-node network with the losses following the winding temperature, exact
ramp_network     two-node network under losses ramping within each segment (friction, iron), exact
affine_steps     exact affine maps of the network over steps, stationary maxima inside them
step_groups      batches of rows for hot_network's shared grids of steps
gearing          speed, torque and inertia through a gearhead
mechanism        screws, belts, racks, drums, wheels, rotary loads; move profiles
cycle            RMS, mean and energy over duty-cycle segments
broadcast        the @vectorised wrapper every function wears (scalars, arrays, Series)
"""

from . import (cycle, gearing, hot_network, inverse_constants, inverse_line, inverse_ratings, mechanism, motor,
               network, operating_point, ramp_network, temperature, thermal, transient)
from .cycle import *  # noqa: F401,F403
from .gearing import *  # noqa: F401,F403
from .inverse_constants import *  # noqa: F401,F403
from .inverse_line import *  # noqa: F401,F403
from .mechanism import *  # noqa: F401,F403
from .inverse_ratings import *  # noqa: F401,F403
from .motor import *  # noqa: F401,F403
from .network import *  # noqa: F401,F403
from .hot_network import *  # noqa: F401,F403
from .ramp_network import *  # noqa: F401,F403
from .operating_point import *  # noqa: F401,F403
from .temperature import *  # noqa: F401,F403
from .thermal import *  # noqa: F401,F403
from .transient import *  # noqa: F401,F403

__all__ = [
    *motor.__all__,
    *operating_point.__all__,
    *inverse_line.__all__,
    *inverse_constants.__all__,
    *inverse_ratings.__all__,
    *temperature.__all__,
    *thermal.__all__,
    *transient.__all__,
    *network.__all__,
    *hot_network.__all__,
    *ramp_network.__all__,
    *gearing.__all__,
    *mechanism.__all__,
    *cycle.__all__,
]
