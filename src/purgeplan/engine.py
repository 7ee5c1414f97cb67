"""Direct steady-state solve of the loop for given design variables.

The loop equations of :mod:`purgeplan.equations` are affine in the flows and, for
fixed flows, affine in the purge fraction and in each per-pass conversion
with no products between them.  Evaluated once over linear forms they give
matrices A0, A_a and A_r with A(a, X) = A0 + a A_a + sum_r X_r A_r; each steady
state is then one dense linear solve.  An equilibrium-limited reactor (and the
recycle gas heat-capacity ratio) is converged by the inner fixed point of
:mod:`purgeplan.fixed_point` on the reactor inlet composition.

This path does not use the optimiser or any solver library; the tests use it
as the independent evaluation of the optimiser's answer.
"""

from __future__ import annotations

from collections import OrderedDict

import numpy as np
from scipy.linalg.lapack import dgesv

from . import coefficients, equations
from .equations import LoopVariables
from .errors import NoSteadyStateError
from .fixed_point import converge, initial_conversions
from .loop import Loop
from .results import LoopState, make_state


class _Lin:
    """A sparse linear form sum_j c_j z_j + k over the unknowns z."""

    __slots__ = ("terms", "const")

    def __init__(self, terms=None, const=0.0):
        self.terms = terms or {}
        self.const = const

    def _combine(self, other, sign):
        if isinstance(other, _Lin):
            terms = dict(self.terms)
            for j, c in other.terms.items():
                terms[j] = terms.get(j, 0.0) + sign * c
            return _Lin(terms, self.const + sign * other.const)
        return _Lin(dict(self.terms), self.const + sign * float(other))

    def __add__(self, other):
        return self._combine(other, 1.0)

    __radd__ = __add__

    def __sub__(self, other):
        return self._combine(other, -1.0)

    def __rsub__(self, other):
        return (self * -1.0) + other

    def __mul__(self, k):
        k = float(k)
        return _Lin({j: c * k for j, c in self.terms.items()}, self.const * k)

    __rmul__ = __mul__


class Engine:
    """Compiled balance equations of one loop (see the module docstring)."""

    def __init__(self, loop: Loop):
        self.loop = loop
        keys = [("flow", s, c) for s in loop.streams for c in loop.components]
        keys += [("extent", i) for i in range(len(loop.reactions))]
        keys += [("source", s.name) for s in loop.sources]
        self.keys = keys
        self.index = {k: j for j, k in enumerate(keys)}
        self.group_rows = self._share_rows()
        n_r = len(loop.reactions)
        a0, b0 = self._matrix(0.0, [0.0] * n_r)
        a1, b1 = self._matrix(1.0, [0.0] * n_r)
        self.a0, self.b0 = a0, b0
        self.a_purge = a1 - a0
        self.a_conv = []
        for i in range(n_r):
            x = [0.0] * n_r
            x[i] = 1.0
            ai, bi = self._matrix(0.0, x)
            self.a_conv.append(ai - a0)
            if np.any(bi != b0) or np.any(b1 != b0):
                raise AssertionError("loop equations: the constants depend on design variables")
        #: A phase-equilibrium separator's liquid shares enter as A += sum_c phi_c A_c, kept
        #: as the nonzero entries (component, row, column, value) of the A_c.
        self.share_entries = None
        if loop.separator_model != "split_fractions":
            zero = [0.0] * n_r
            stack = np.array([self._matrix(0.0, zero, liquid_share={
                o: float(o == c) for o in loop.components})[0] - a0 for c in loop.components])
            k, row, col = np.nonzero(stack)
            self.share_entries = (k, row, col, stack[k, row, col])
        if a0.shape[0] != a0.shape[1]:
            raise NoSteadyStateError(
                f"{a0.shape[0]} equations for {a0.shape[1]} unknowns: case validation "
                "(purgeplan.case_checks) should have refused the loop.inlet_ratios of this case")

    def _vars(self, purge_fraction, conversion, liquid_share=None):
        idx = self.index
        flow = {(s, c): _Lin({idx["flow", s, c]: 1.0})
                for s in self.loop.streams for c in self.loop.components}
        extent = [_Lin({idx["extent", i]: 1.0}) for i in range(len(self.loop.reactions))]
        source = {s.name: _Lin({idx["source", s.name]: 1.0}) for s in self.loop.sources}
        if liquid_share is None and self.loop.separator_model != "split_fractions":
            liquid_share = dict.fromkeys(self.loop.components, 0.0)
        return LoopVariables(flow, extent, source, purge_fraction, dict(enumerate(conversion)),
                             liquid_share)

    def _share_rows(self):
        """Sources in the same group beyond the first: f_s = share_s sum_group f."""
        groups = OrderedDict()
        for s in self.loop.sources:
            groups.setdefault(s.enters, []).append(s.name)
        return [names for names in groups.values() if len(names) > 1]

    def _matrix(self, purge_fraction, conversion, shares=None, liquid_share=None):
        v = self._vars(purge_fraction, conversion, liquid_share)
        rows = [res for family in equations.EQUATION_FAMILIES for _, res in family(v, self.loop)]
        n = len(self.keys)
        nrows = len(rows) + sum(len(g) - 1 for g in self.group_rows)
        a = np.zeros((nrows, n))
        b = np.zeros(nrows)
        for i, row in enumerate(rows):
            for j, c in row.terms.items():
                a[i, j] += c
            b[i] = -row.const
        self._share_row_start = len(rows)
        return a, b

    def solve(self, purge_fraction: float, conversion, shares: dict[str, float] | None = None,
              liquid_share: dict[str, float] | None = None):
        """Flows for the design variables; raises NoSteadyStateError if singular.

        ``liquid_share`` is a phase-equilibrium separator's share of each component
        leaving in the liquid (see :func:`purgeplan.equations.separator_split`).
        """
        a = self.a0 + purge_fraction * self.a_purge
        for i, x in enumerate(conversion):
            a += x * self.a_conv[i]
        if self.share_entries is not None:
            k, row, col, value = self.share_entries
            phi = np.array([liquid_share[c] for c in self.loop.components])
            np.add.at(a, (row, col), phi[k] * value)
        b = self.b0
        row = self._share_row_start
        for names in self.group_rows:
            w = {n: (shares or {}).get(n, 1.0 / len(names)) for n in names}
            total = sum(w.values())
            for n in names[1:]:
                a[row, :] = 0.0
                a[row, self.index["source", n]] = 1.0
                for m in names:
                    a[row, self.index["source", m]] -= w[n] / total
                row += 1
        # LAPACK's dgesv directly: the same LU solve as numpy.linalg.solve with less overhead
        _, _, z, info = dgesv(a, b, overwrite_a=True)
        if info != 0:
            raise NoSteadyStateError(self._why_singular(purge_fraction))
        # a nearly singular loop shows as a huge or non-finite solution
        if not np.all(np.isfinite(z)) or np.abs(z).max() > 1e12 * max(1.0, np.abs(b).max()):
            raise NoSteadyStateError(self._why_singular(purge_fraction))
        return z

    def _why_singular(self, purge_fraction: float) -> str:
        loop = self.loop
        trapped = [c for c in loop.inerts
                   if loop.liquid_fraction.get(c, 0.0) == 0.0
                   and any(s.composition[c] > 0 for s in loop.sources)]
        if purge_fraction == 0.0 and trapped:
            return (f"no steady state without a purge: inert {', '.join(trapped)} enters with "
                    "the make-up gas and has no outlet, so it builds up at its make-up rate")
        return "no steady state: the loop equations are singular for these design variables"

    def linear_solve(self, purge_fraction: float, shares: dict[str, float] | None = None):
        """The engine as the linear solve of :func:`purgeplan.fixed_point.converge`."""
        n_r = len(self.loop.reactions)

        def solve(conversion, _work, point=None):  # V/L held at the point's
            return self.unpack(self.solve(purge_fraction, [conversion[i] for i in range(n_r)],
                                          shares, None if point is None else point.share))
        return solve

    def unpack(self, z):
        loop = self.loop
        flows = {s: {c: float(z[self.index["flow", s, c]]) for c in loop.components}
                 for s in loop.streams}
        extents = [float(z[self.index["extent", i]]) for i in range(len(loop.reactions))]
        sources = {s.name: float(z[self.index["source", s.name]]) for s in loop.sources}
        return flows, extents, sources


_CACHE: OrderedDict[int, tuple[Loop, Engine]] = OrderedDict()


def engine_for(loop: Loop) -> Engine:
    """The compiled engine of a loop, kept for the most recent loops."""
    hit = _CACHE.get(id(loop))
    if hit is not None and hit[0] is loop:
        _CACHE.move_to_end(id(loop))
        return hit[1]
    eng = Engine(loop)
    _CACHE[id(loop)] = (loop, eng)
    while len(_CACHE) > 64:
        _CACHE.popitem(last=False)
    return eng


def steady_state(loop: Loop, purge_fraction: float | None = None,
                 conversion: dict[int, float] | None = None,
                 shares: dict[str, float] | None = None,
                 tolerance: float = 1e-13, max_iterations: int = 200) -> LoopState:
    """Steady state of the loop for given design variables.

    Parameters
    ----------
    loop : Loop
    purge_fraction : float, optional
        Fraction of the separator vapour purged [-]; default the case's value.
    conversion : dict, optional
        Per-pass conversion of a sized reaction's key reactant [-]; fixed and
        equilibrium reactions take theirs from the case.
    shares : dict, optional
        Share of each source within its group (make-up or direct feed) when a
        group has several; default equal shares.
    tolerance : float
        Convergence of the inner fixed point on the per-pass conversions.

    Raises
    ------
    NoSteadyStateError
        With the reason, for instance an inert with no outlet.
    """
    a = loop.purge_fraction if purge_fraction is None else float(purge_fraction)
    eng = engine_for(loop)
    done = converge(loop, eng.linear_solve(a, shares), initial_conversions(loop, conversion),
                    tolerance=tolerance, max_iterations=max_iterations)
    return make_state(loop, a, done.conversion, done.flows, done.extents, done.sources,
                      done.recycle_work_kj_kmol,
                      coefficients.catalyst_volume_per_feed_m3_h_kmol(
                          loop, done.conversion, done.equilibrium_conversion,
                          done.flows["reactor_feed"]),
                      done.equilibrium_conversion, route="direct linear solve")
