"""purgeplan: lowest-cost purge fraction and inert setpoint for gas recycle loops.

Feasibility-grade estimates only.  Purge gas is flammable and often toxic
(hydrogen, ammonia, carbon monoxide) and synthesis loops run at high
pressure: equipment design, relief and flare systems follow local codes and
licensed engineering practice.

The public names below are imported on first use, so that the command line
starts quickly.
"""

import logging
from importlib import import_module

__version__ = "0.1.0"

# Library code logs; only an application decides where the messages go.
logging.getLogger(__name__).addHandler(logging.NullHandler())

_PUBLIC = {
    "Case": "case", "expand_alternatives": "case", "load_case": "case",
    "parse_case_text": "case", "build_loop": "build", "steady_state": "engine",
    "optimise": "solve", "run_study": "study",
}

__all__ = [*sorted(_PUBLIC), "__version__"]


def __getattr__(name: str):
    if name in _PUBLIC:
        return getattr(import_module(f".{_PUBLIC[name]}", __name__), name)
    raise AttributeError(f"module 'purgeplan' has no attribute {name!r}")
