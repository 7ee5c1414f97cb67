"""purgeplan: lowest-cost purge fraction and inert setpoint for gas recycle loops.

Feasibility-grade estimates only.  Purge gas is flammable and often toxic
(hydrogen, ammonia, carbon monoxide) and synthesis loops run at high
pressure: equipment design, relief and flare systems follow local codes and
licensed engineering practice.
"""

__version__ = "0.1.0"

from .case import Case, expand_alternatives, load_case, parse_case_text  # noqa: E402
from .engine import steady_state  # noqa: E402
from .loop import build_loop  # noqa: E402

__all__ = ["Case", "build_loop", "expand_alternatives", "load_case", "parse_case_text",
           "steady_state", "__version__"]
