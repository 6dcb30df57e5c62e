"""ascentplan: throttle, steering and stage-mass-split optimisation of rocket ascents.

Direct collocation of the variable-mass ascent, solved by IPOPT through CasADi, and
verified by independent forward integration with scipy's ``solve_ivp``.
"""

from ascentplan.cautions import CAUTION

__version__ = "0.1.0"

__all__ = ["CAUTION", "__version__"]
