"""Reactor sizing: a reversible first-order plug-flow relation, a catalyst bed
integrated over a rate expression, isothermal or as adiabatic beds in series with
cooling between them (:class:`AdiabaticBeds`) or with cold feed gas injected between
them (:class:`QuenchBeds`).

Notes
-----
For A = R, first order both ways, plug flow and no product in the feed,

    k tau = X_e ln(X_e / (X_e - X))

(Levenspiel, *Chemical Reaction Engineering*, 3rd ed., Wiley 1999, ch. 5,
reversible first-order reaction in a plug-flow reactor; the equation number
is not quoted here).  Calibrated at one reference design point, the catalyst
volume at the same temperature and pressure scales with the inlet molar flow
and with this function, so that V = V_ref (F/F_ref) g(X, X_e) / g(X_ref, X_e,ref).
"""

from __future__ import annotations

import dataclasses
import functools
import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from . import equilibrium, thermo


def first_order_reversible_pfr_ktau(conversion: float, equilibrium_conversion: float) -> float:
    """Dimensionless size k tau of a reversible first-order plug-flow reactor [-].

    Parameters
    ----------
    conversion : float
        Per-pass conversion X [-], 0 <= X < X_e.
    equilibrium_conversion : float
        Equilibrium conversion X_e [-] at the reactor inlet composition.
    """
    if not 0.0 <= conversion < equilibrium_conversion:
        raise ValueError(f"conversion {conversion:.6g} must lie in "
                         f"[0, equilibrium {equilibrium_conversion:.6g})")
    return equilibrium_conversion * math.log(equilibrium_conversion /
                                             (equilibrium_conversion - conversion))


#: Molar volume of an ideal gas at 0 degC and 1 atm [m3/kmol] (normal cubic metres).
NORMAL_MOLAR_VOLUME_M3_KMOL = 22.414


def catalyst_volume_from_space_velocity_m3(feed_kmol_h, space_velocity_per_h: float):
    """Catalyst volume at a set gas hourly space velocity [m3].

    V = F v_N / GHSV, with the feed in normal cubic metres per hour (common
    practice for sizing synthesis converters at a fixed space velocity).

    Parameters
    ----------
    feed_kmol_h : float or expression
        Reactor feed [kmol/h].
    space_velocity_per_h : float
        Gas hourly space velocity at normal conditions [Nm3/(m3 h)].
    """
    return feed_kmol_h * NORMAL_MOLAR_VOLUME_M3_KMOL / space_velocity_per_h


#: Gauss-Legendre nodes and weights on [-1, 1] for the bed integral.
_NODES, _WEIGHTS = np.polynomial.legendre.leggauss(32)


def isothermal_bed_volume_per_feed_m3_h_kmol(
        rate: Callable[[np.ndarray], np.ndarray], inlet_fractions: np.ndarray,
        stoichiometry: np.ndarray, key: int, conversion: float,
        equilibrium_conversion: float) -> float:
    """Catalyst volume per kmol/h of bed feed to reach a conversion isothermally [m3 h/kmol].

    The plug-flow design equation for one reaction, dV = dxi / r
    (Levenspiel, *Chemical Reaction Engineering*, 3rd ed., ch. 5), written
    per kmol/h of feed with the extent xi = X y_k0 / |nu_k|:

        V / F0 = (y_k0 / |nu_k|) int_0^X dX' / r(y(X')),
        y_i(X') = (y_i0 + nu_i xi) / (1 + dnu xi).

    The volume grows without bound as X nears the equilibrium conversion
    X_e (where r = 0), and is infinite at or beyond it.  The integral is
    taken by 32-point Gauss-Legendre quadrature in s = -ln(1 - X'/X_e), in
    which the integrand stays finite up to equilibrium.

    Parameters
    ----------
    rate : callable
        Effective rate of the reaction (kmol of extent per m3 of bed per hour,
        the effectiveness factor included) at mole fractions of shape (C, n);
        where it is zero or less short of equilibrium, the volume is infinite.
    inlet_fractions : ndarray, shape (C,)
        Bed inlet mole fractions [-].
    stoichiometry : ndarray, shape (C,)
        Stoichiometric coefficients [-].
    key : int
        Index of the key reactant.
    conversion, equilibrium_conversion : float
        Per-pass conversion X of the key reactant and its equilibrium value X_e [-].
    """
    y0 = np.asarray(inlet_fractions, dtype=float)
    nu = np.asarray(stoichiometry, dtype=float)
    per_x = y0[key] / -nu[key]                 # extent per unit conversion and feed

    def along(x):
        xi = per_x * x
        return rate((y0[:, None] + nu[:, None] * xi) / (1.0 + nu.sum() * xi))
    return _bed_integral(along, per_x, 0.0, conversion, equilibrium_conversion)


def _bed_integral(rate_at: Callable[[np.ndarray], np.ndarray], per_x: float, x_in: float,
                  x_out: float, x_e: float) -> float:
    """per_x int_{x_in}^{x_out} dX / r(X) towards an equilibrium conversion x_e [m3 h/kmol].

    By 32-point Gauss-Legendre quadrature in s = -ln(1 - (X - x_in)/(x_e - x_in)),
    in which the integrand stays finite up to equilibrium where r vanishes
    linearly; ``rate_at`` gives r at an array of conversions.  Infinite at or
    beyond x_e and where the rate is zero or less short of it.
    """
    if not x_out < x_e:
        return math.inf
    if x_out <= x_in:
        return 0.0
    span = x_e - x_in
    top = -math.log1p(-(x_out - x_in) / span)
    s = 0.5 * top * (_NODES + 1.0)
    x = x_in + span * -np.expm1(-s)
    dx_ds = span * np.exp(-s)
    r = rate_at(x)
    if np.any(r <= 0.0):
        return math.inf
    return float(per_x * 0.5 * top * (_WEIGHTS @ (dx_ds / r)))


# ---------------------------------------------------------------------------
# adiabatic beds in series with cooling between them


@dataclass(frozen=True)
class Bed:
    """One adiabatic bed of a series at a converter's per-pass conversion.

    Conversions are of the key reactant, counted from the converter's feed [-];
    temperatures [K]; ``equilibrium_conversion`` is where the bed's adiabatic
    line meets the equilibrium curve; ``volume_per_feed_m3_h_kmol`` is the
    bed's catalyst per kmol/h of converter feed (0 for a bed not used).
    ``feed_share`` is, in a quench converter (:class:`QuenchBeds`), the share of
    the converter feed that joins the gas at the bed's inlet (bed 1: the
    preheated gas; the others: the quench gas) [-], and None with cooling.
    """

    inlet_temperature_k: float
    outlet_temperature_k: float
    inlet_conversion: float
    outlet_conversion: float
    equilibrium_conversion: float
    volume_per_feed_m3_h_kmol: float
    feed_share: float | None = None


@dataclass(frozen=True)
class AdiabaticBeds:
    """Adiabatic catalyst beds in series, the gas cooled between beds to a set inlet temperature.

    The converter's feed (mole fractions ``inlet_fractions``) passes bed 1,
    is cooled by an exchanger to the inlet temperature of bed 2, and so on;
    no gas is added between beds (indirect cooling; quench is :class:`QuenchBeds`), so the
    conversion X of the key reactant is counted from the converter feed
    throughout.  Per kmol of converter feed the moles at conversion X are
    n(X) = y0 + nu xi, xi = X y0_k / |nu_k|.

    Along a bed the gas is adiabatic (:meth:`temperature_k`); the bed's
    catalyst follows from the plug-flow design equation dV = dxi / r(y, T)
    with the rate at the local temperature (Levenspiel, *Chemical Reaction
    Engineering*, 3rd ed., Wiley 1999, ch. 5 for the design equation and
    ch. 9 for adiabatic beds and their staging; equation numbers not quoted).
    A bed runs towards the conversion where its adiabatic line meets the
    equilibrium curve (:meth:`equilibrium_conversion`): its catalyst grows
    without bound there and equilibrium is never crossed.

    Parameters
    ----------
    inlet_fractions, stoichiometry : ndarray, shape (C,)
        Converter feed mole fractions [-] and stoichiometric coefficients [-].
    key : int
        Index of the key reactant.
    cp_coefficients : ndarray, shape (C, m)
        Poling Cp/R polynomial of each component (:mod:`purgeplan.physics.thermo`).
    delta_h_298_j_mol : float
        Standard reaction enthalpy at 298.15 K per unit extent [J/mol].
    inlet_temperatures_k : tuple of float
        Inlet temperature of each bed, in flow order [K].
    rate : callable
        rate(y, T): effective rate [kmol extent/(m3 h)] at mole fractions of
        shape (C, n) and a temperature T [K], one for all columns or one per column.
    equilibrium_rhs : callable
        T -> ln K(T) - dnu ln(P/P0) - sum nu ln phi(T), the right-hand side of
        the equilibrium condition sum nu ln n - dnu ln n_total = rhs
        (:func:`purgeplan.physics.equilibrium.equilibrium_extents_kmol_h`).
    """

    inlet_fractions: np.ndarray
    stoichiometry: np.ndarray
    key: int
    cp_coefficients: np.ndarray
    delta_h_298_j_mol: float
    inlet_temperatures_k: tuple
    rate: Callable[[np.ndarray, float | np.ndarray], np.ndarray]
    equilibrium_rhs: Callable[[float], float]

    # -- the gas along the converter --------------------------------------------
    @functools.cached_property
    def _plain(self) -> tuple:
        """The data as plain floats for the point-by-point root finds: extent per unit
        conversion per kmol of feed, y0, nu, each component's Cp/R polynomial, the
        reaction's Delta Cp/R polynomial and dnu."""
        y0 = [float(v) for v in self.inlet_fractions]
        nu = [float(v) for v in self.stoichiometry]
        cp = [[float(v) for v in row] for row in self.cp_coefficients]
        dcp = [sum(n * row[k] for n, row in zip(nu, cp, strict=True)) for k in range(len(cp[0]))]
        return y0[self.key] / -nu[self.key], y0, nu, cp, dcp, sum(nu)

    @property
    def _per_x(self) -> float:
        """Extent per unit conversion, per kmol of converter feed [kmol/kmol]."""
        return self._plain[0]

    def moles(self, conversion) -> np.ndarray:
        """Moles of each component per kmol of converter feed at conversion X, shape (C, n)."""
        xi = self._per_x * np.atleast_1d(np.asarray(conversion, dtype=float))
        return self.inlet_fractions[:, None] + self.stoichiometry[:, None] * xi

    def _moles_plain(self, conversion: float) -> list[float]:
        per_x, y0, nu = self._plain[:3]
        xi = per_x * conversion
        return [a + b * xi for a, b in zip(y0, nu, strict=True)]

    def _gas_cp_plain(self, moles: list[float]) -> list[float]:
        """Cp/R polynomial of a gas of these moles [-, 1/K, ...]."""
        cp = self._plain[3]
        return [sum(n * row[k] for n, row in zip(moles, cp, strict=True))
                for k in range(len(cp[0]))]

    def fractions(self, conversion) -> np.ndarray:
        """Mole fractions at conversion X, shape (C, n)."""
        n = self.moles(conversion)
        return n / n.sum(axis=0)

    def temperature_k(self, inlet_conversion: float, inlet_temperature_k: float, conversion):
        """Temperature along an adiabatic bed entered at (X_in, T_in), at conversions X [K].

        The enthalpy balance of the bed, taken along the path "react at T_in,
        then heat the products to T":

            (xi - xi_in) Delta H_r(T_in) + int_{T_in}^{T} sum_i n_i(X) Cp_i(T') dT' = 0,

        with Delta H_r(T_in) by Kirchhoff's law from the formation enthalpies
        (:func:`purgeplan.physics.equilibrium.reaction_enthalpy_j_mol`) and the
        ideal-gas heat capacities of :mod:`purgeplan.physics.thermo` (enthalpy
        being a function of state, any path gives the same T).  Ideal gas: the
        enthalpy departures of the loop gas at loop pressure are neglected.
        Solved by Newton's method from the constant-Cp estimate.
        """
        scalar = np.ndim(conversion) == 0
        dh = self._reaction_enthalpy_j_mol(inlet_temperature_k)
        if scalar:                  # plain floats: the root finds call this point by point
            heat = self._per_x * (float(conversion) - inlet_conversion) * dh
            a = self._gas_cp_plain(self._moles_plain(float(conversion)))
        else:
            x = np.asarray(conversion, dtype=float)
            heat = self._per_x * (x - inlet_conversion) * dh
            a = self.cp_coefficients.T @ self.moles(x)      # Cp/R polynomial of the gas, (m, n)
        t = inlet_temperature_k - heat / thermo.cp_ideal_gas_j_mol_k(a, inlet_temperature_k)
        tolerance = 1e-9 * inlet_temperature_k
        for _ in range(50):
            f = heat + thermo.cp_enthalpy_integral_j_mol(a, inlet_temperature_k, t)
            step = f / thermo.cp_ideal_gas_j_mol_k(a, t)
            t = t - step
            if (abs(step) < tolerance) if scalar else np.all(np.abs(step) < tolerance):
                return np.array([t]) if scalar else t
        raise ArithmeticError("the adiabatic temperature did not converge in 50 Newton steps")

    def conversion_on_adiabat(self, inlet_conversion: float, inlet_temperature_k: float,
                              temperature_k: float) -> float:
        """Conversion at which an adiabatic bed entered at (X_in, T_in) reaches T [-].

        The enthalpy balance of :meth:`temperature_k` taken along the other
        path, "heat the inlet gas to T, then react at T":

            sum_i n_i(X_in) int_{T_in}^{T} Cp_i dT' + (xi - xi_in) Delta H_r(T) = 0,

        explicit in the extent.
        """
        a = self._gas_cp_plain(self._moles_plain(inlet_conversion))
        heating = thermo.cp_enthalpy_integral_j_mol(a, inlet_temperature_k, temperature_k)
        extent = -heating / self._reaction_enthalpy_j_mol(temperature_k)
        return inlet_conversion + extent / self._per_x

    def _reaction_enthalpy_j_mol(self, temperature_k: float) -> float:
        """Delta H_r(T) per unit extent, Kirchhoff's law from the formation data [J/mol]."""
        return equilibrium.reaction_enthalpy_j_mol(self.delta_h_298_j_mol, self._plain[4],
                                                   temperature_k)

    def rate_on_adiabat(self, inlet_conversion: float, inlet_temperature_k: float,
                        conversion) -> np.ndarray:
        """Rate along an adiabatic bed at conversions X [kmol/(m3 h)]."""
        if np.ndim(conversion) == 0:     # one point: the plain-float temperature
            t = self.temperature_k(inlet_conversion, inlet_temperature_k, float(conversion))
        else:
            t = self.temperature_k(inlet_conversion, inlet_temperature_k,
                                   np.asarray(conversion, dtype=float))
        return np.asarray(self.rate(self.fractions(conversion), t), dtype=float).ravel()

    def rate_at(self, temperature_k: float, conversion) -> np.ndarray:
        """Rate of the gas at conversions X and one temperature [kmol/(m3 h)]."""
        return np.asarray(self.rate(self.fractions(conversion), temperature_k), dtype=float)

    # -- one bed ----------------------------------------------------------------
    def _equilibrium_residual(self, conversion: float, temperature_k: float) -> float:
        """sum nu ln n - dnu ln n_total - rhs(T): negative short of equilibrium [-]."""
        n = self._moles_plain(conversion)
        nu, dnu = self._plain[2], self._plain[5]
        return equilibrium.equilibrium_residual(
            [(m, v) for m, v in zip(n, nu, strict=True) if v != 0.0], sum(n), dnu,
            self.equilibrium_rhs(temperature_k))

    def equilibrium_conversion(self, inlet_conversion: float,
                               inlet_temperature_k: float) -> float:
        """Conversion where a bed's adiabatic line meets the equilibrium curve [-].

        The equilibrium condition on the adiabatic line, parametrised by its
        temperature (:meth:`conversion_on_adiabat`), solved by Brent's method
        between the bed inlet and the temperature at which a reactant runs
        out.  The inlet itself where the gas enters at or beyond equilibrium
        (the bed converts nothing).
        """
        from scipy.optimize import brentq  # here, so that reading a case does not import SciPy

        nu, y0 = self.stoichiometry, self.inlet_fractions
        x_in, t_in = inlet_conversion, inlet_temperature_k
        x_out = min(y0[i] / (-nu[i] * self._per_x) for i in range(nu.size) if nu[i] < 0)
        x_hi = x_in + (1.0 - 1e-12) * (x_out - x_in)
        if self._equilibrium_residual(x_in, t_in) >= 0.0:
            return x_in
        t_hi = float(self.temperature_k(x_in, t_in, x_hi)[0])
        if self._equilibrium_residual(x_hi, t_hi) <= 0.0:
            return x_hi

        def g(t):
            return self._equilibrium_residual(self.conversion_on_adiabat(x_in, t_in, t), t)
        t_e = brentq(g, t_in, t_hi, xtol=1e-10 * t_in, rtol=1e-13, maxiter=200)
        return float(self.conversion_on_adiabat(x_in, t_in, t_e))

    def bed_volume_per_feed_m3_h_kmol(self, inlet_conversion: float, inlet_temperature_k: float,
                                      outlet_conversion: float,
                                      equilibrium_conversion: float | None = None) -> float:
        """Catalyst of one adiabatic bed per kmol/h of converter feed [m3 h/kmol].

        V / F0 = (y_k0 / |nu_k|) int_{X_in}^{X_out} dX / r(y(X), T(X)) along the
        adiabat, by the quadrature of :func:`isothermal_bed_volume_per_feed_m3_h_kmol`
        in s = -ln(1 - (X - X_in)/(X_e - X_in)) with X_e the bed's adiabatic
        equilibrium conversion (:meth:`equilibrium_conversion`): infinite at or
        beyond it.
        """
        x_e = (equilibrium_conversion if equilibrium_conversion is not None
               else self.equilibrium_conversion(inlet_conversion, inlet_temperature_k))
        return _bed_integral(
            lambda x: self.rate_on_adiabat(inlet_conversion, inlet_temperature_k, x),
            self._per_x, inlet_conversion, outlet_conversion, x_e)

    # -- the series -------------------------------------------------------------
    def boundary_conversions(self, n: int, inlet_conversion: float,
                             equilibrium_conversion: float) -> tuple[float, ...]:
        """Candidate conversions at which bed n (from 0) hands over to bed n + 1 [-].

        Least total catalyst for a given overall conversion: the derivative of
        sum_n int dX / r_n with respect to the conversion X_n between beds n and
        n + 1 vanishes where 1 / r_n(X_n) = 1 / r_{n+1}(X_n), the rate at the
        exit of bed n equal to the rate of the cooled gas entering bed n + 1
        at the same conversion (Levenspiel, ch. 9, optimal staging of adiabatic
        beds with cooling between them).  Of the roots, the last at which
        r_n - r_{n+1} falls through zero (a local minimum of the catalyst: r_n
        vanishes at the bed's equilibrium while r_{n+1} is still positive
        there).  Where r_n - r_{n+1} <= 0 at the bed's inlet (the cooled gas
        is faster from the start) skipping bed n is also a local minimum, and
        where r_n - r_{n+1} > 0 up to the bed's equilibrium (the cooled gas
        at or beyond its own equilibrium) bed n runs to its equilibrium and
        the beds after it convert nothing: each is a candidate, and
        :meth:`split` keeps the arrangement of least catalyst.

        The rule neglects that moving X_n also moves bed n + 1's adiabatic
        line (entered at X_n at its set inlet temperature).  It is exact when
        the bed inlet temperatures are themselves optimal (Levenspiel's second
        condition, int d(1/r)/dT dX = 0 over each bed): the adiabats form one
        family, labelled by their enthalpy, so a catalyst stationary in the
        inlet temperature is stationary in that shift too.  With inlet
        temperatures set otherwise the rule's catalyst lies above the least
        (measured: up to 2 %, docs/references.md section 16); the boundaries
        it gives do not depend on the overall conversion, which keeps the
        split cheap enough for the loop's search.
        """
        from scipy.optimize import brentq  # here, so that reading a case does not import SciPy

        t_n, t_next = self.inlet_temperatures_k[n], self.inlet_temperatures_k[n + 1]
        x_in, x_e = inlet_conversion, equilibrium_conversion
        if not x_e > x_in:
            return (x_in,)

        def h(x):
            return (self.rate_on_adiabat(x_in, t_n, x) - self.rate_at(t_next, x)).ravel()
        # even in X where the bed heats up, dense in s = -ln(1 - (X - X_in)/(X_e - X_in))
        # towards its equilibrium
        f = np.union1d(np.linspace(0.0, 0.9, 10), -np.expm1(-np.linspace(2.5, 14.0, 8)))
        grid = x_in + (x_e - x_in) * np.append(f, 1.0 - 1e-9)
        values = h(grid)
        out = [x_in] if values[0] <= 0.0 else []
        falls = [j for j in range(len(grid) - 1) if values[j] > 0.0 >= values[j + 1]]
        if falls:
            j = falls[-1]
            # the rule's boundary is near the least catalyst, where the total is flat
            out.append(brentq(lambda x: float(h(x)[0]), grid[j], grid[j + 1],
                              xtol=1e-10, rtol=1e-10))
        if values[-1] > 0.0:
            out.append(x_e)
        return tuple(out)

    @functools.cached_property
    def frames(self) -> tuple[tuple[tuple[float, float, float], ...], ...]:
        """Every candidate arrangement: per bed (inlet conversion, adiabatic equilibrium
        conversion, boundary conversion), from the converter inlet on.

        Independent of the overall conversion: the boundaries of
        :meth:`boundary_conversions` depend only on the feed and the inlet
        temperatures.  The last bed's boundary is its equilibrium conversion;
        an arrangement ends at the first bed that runs to its equilibrium.
        """
        last = len(self.inlet_temperatures_k) - 1
        out = []

        def build(n: int, x_in: float, prefix: tuple) -> None:
            t_in = self.inlet_temperatures_k[n]
            x_e = self.equilibrium_conversion(x_in, t_in)
            if n == last:
                out.append((*prefix, (x_in, x_e, x_e)))
                return
            for x_next in self.boundary_conversions(n, x_in, x_e):
                if x_next >= x_e:
                    out.append((*prefix, (x_in, x_e, x_e)))
                else:
                    build(n + 1, x_next, (*prefix, (x_in, x_e, x_next)))
        build(0, 0.0, ())
        return tuple(out)

    def _beds_of(self, frame: tuple, conversion: float) -> list[Bed]:
        """The beds of one arrangement at conversion X."""
        beds = []
        for n, t_in in enumerate(self.inlet_temperatures_k):
            if n >= len(frame) or frame[n][0] >= conversion:
                # reached in an earlier bed: this one is not used
                x_in = beds[-1].outlet_conversion if beds else 0.0
                beds.append(Bed(t_in, t_in, x_in, x_in, x_in, 0.0))
                continue
            x_in, x_e, x_next = frame[n]
            x_out = conversion if n == len(frame) - 1 else min(conversion, x_next)
            volume = self.bed_volume_per_feed_m3_h_kmol(x_in, t_in, x_out, x_e)
            t_out = (float(self.temperature_k(x_in, t_in, min(x_out, x_e))[0])
                     if x_out > x_in else t_in)
            beds.append(Bed(t_in, t_out, float(x_in), float(x_out), float(x_e), volume))
        return beds

    def split(self, conversion: float) -> list[Bed]:
        """The beds at an overall per-pass conversion X, bed by bed in flow order.

        Of the arrangements of :attr:`frames` the one of least total catalyst
        (the first of equals); the bed in which X falls runs to X and the beds
        after it are not used (their catalyst is 0, their gas passes at its
        inlet temperature).  Where X is at or beyond every arrangement's last
        adiabatic equilibrium the catalyst is infinite: no converter of these
        beds reaches it.
        """
        best, best_volume = None, math.inf
        for frame in self.frames:
            if frame[-1][1] <= conversion:
                continue
            beds = self._beds_of(frame, conversion)
            volume = sum(b.volume_per_feed_m3_h_kmol for b in beds)
            if volume < best_volume:
                best, best_volume = beds, volume
        if best is None:
            reach = max(self.frames, key=lambda f: f[-1][1])
            return self._beds_of(reach, conversion)
        return best

    def attainable_conversion(self) -> float:
        """The largest per-pass conversion the beds approach: the largest last adiabatic
        equilibrium of the arrangements of :attr:`frames` [-]."""
        return float(max(frame[-1][1] for frame in self.frames))

    def volume_per_feed_m3_h_kmol(self, conversion: float) -> float:
        """Total catalyst of the beds per kmol/h of converter feed at conversion X [m3 h/kmol]."""
        return sum(b.volume_per_feed_m3_h_kmol for b in self.split(conversion))


# ---------------------------------------------------------------------------
# adiabatic beds in series with cold feed gas injected between them (quench)

#: Catalyst of a trial quench arrangement that misses the overall conversion: larger than
#: any real one [m3 h/kmol], growing with the miss so that the search is led back.
_MISSED = 1e6
#: Largest advance of a bed towards its adiabatic equilibrium searched, u = -ln(1 - f) [-]:
#: within 4e-18 of it.
_U_MAX = 40.0


@dataclass(frozen=True)
class QuenchBeds:
    """Adiabatic catalyst beds in series, cold converter feed injected between beds (quench).

    Part of the converter feed, the share phi_1, is preheated and enters bed 1
    at its set inlet temperature; the rest is kept at the quench temperature
    T_q and injected between beds, after bed n the amount that brings the mix
    of the bed's outlet gas and the quench gas to the set inlet temperature of
    bed n + 1.  With every inlet temperature set, the shares follow from the
    bed boundaries: phi_1 is what remains of the feed once the quench gas is
    counted, so the quench never needs more than the feed (the last injection
    is the feed that remains), and the arrangements that cannot be built are
    those in which a bed's outlet is cooler than the next bed's set inlet
    temperature (quench can only cool), and those that cannot reach the
    overall conversion (below the conversion at the last quench point, or at
    or beyond the last bed's adiabatic equilibrium): their catalyst is
    infinite.

    Conversion coordinate.  Within bed n the gas is the feed that has entered
    so far, Phi_n kmol per kmol of converter feed (Phi_N = 1), of which the
    key reactant's local conversion x counts from that gas: per kmol of it the
    moles are y0 + nu xi, xi = x y0_k / |nu_k|, the coordinate of
    :class:`AdiabaticBeds` (whose adiabats, rate and equilibrium are used as
    they are, in ``gas``).  The conversion counted from the whole converter
    feed is X = Phi_n x; quench gas of q kmol per kmol of gas leaving bed n
    lowers the local conversion from x_n to x_n / (1 + q) and keeps X, so
    Phi_{n+1} = Phi_n (1 + q_n).  The per-pass conversion is X at the
    converter outlet, which is the last bed's local conversion.

    Catalyst per kmol/h of converter feed: W = sum_n Phi_n (V/F)_n with
    (V/F)_n the bed's catalyst per kmol/h of the gas through it
    (:meth:`AdiabaticBeds.bed_volume_per_feed_m3_h_kmol`, the plug-flow design
    equation along the adiabat).  The bed boundaries are chosen for least W at
    each overall conversion by SciPy's minimisers (the quench shares of all
    beds before a boundary change with it, so Levenspiel's rule for
    interstage cooling does not carry over; Levenspiel, *Chemical Reaction
    Engineering*, 3rd ed., Wiley 1999, ch. 9, treats cold-shot staging).

    Parameters
    ----------
    gas : AdiabaticBeds
        The converter feed, its adiabats, rate and equilibrium, and the bed
        inlet temperatures [K] (two or more).
    quench_temperature_k : float
        Temperature of the quench gas [K], below every bed's inlet temperature.
    """

    gas: AdiabaticBeds
    quench_temperature_k: float

    def __post_init__(self):
        t = self.gas.inlet_temperatures_k
        if len(t) < 2:
            raise ValueError("a quench converter has two or more beds")
        if not self.quench_temperature_k < min(t):
            raise ValueError(f"quench temperature {self.quench_temperature_k:.6g} K must lie "
                             f"below every bed's inlet temperature (lowest {min(t):.6g} K)")

    @property
    def inlet_temperatures_k(self) -> tuple:
        """Inlet temperature of each bed, in flow order [K]."""
        return self.gas.inlet_temperatures_k

    def quench_per_gas(self, conversion: float, outlet_temperature_k: float,
                       inlet_temperature_k: float) -> float:
        """Quench gas per kmol of gas leaving a bed, to mix to the next bed's inlet
        temperature [kmol/kmol].

        The enthalpy balance of the mixing point (adiabatic, no reaction):

            sum_i n_i(x) int_{T_in}^{T_out} Cp_i dT = q sum_i y0_i int_{T_q}^{T_in} Cp_i dT,

        the outlet gas at local conversion x and T_out cooled to the next
        inlet temperature T_in by the quench gas (the converter feed, y0)
        heated from T_q; ideal-gas heat capacities of
        :mod:`purgeplan.physics.thermo`.  Negative where the outlet is cooler
        than T_in.
        """
        g = self.gas
        hot = g._gas_cp_plain(g._moles_plain(conversion))
        cold = g._gas_cp_plain(g._moles_plain(0.0))
        return (thermo.cp_enthalpy_integral_j_mol(hot, inlet_temperature_k, outlet_temperature_k)
                / thermo.cp_enthalpy_integral_j_mol(cold, self.quench_temperature_k,
                                                    inlet_temperature_k))

    @functools.cached_property
    def _first_equilibrium(self) -> float:
        return self.gas.equilibrium_conversion(0.0, self.inlet_temperatures_k[0])

    def _chain(self, advances) -> list[tuple] | None:
        """The beds before the last for the advances u_n >= 0 of beds 1 to N - 1: per bed
        (local inlet, adiabatic equilibrium and outlet conversion, outlet temperature,
        quench per gas), and the last bed's local inlet and equilibrium conversion; None
        where a bed cannot heat to the next inlet temperature.

        Bed n leaves at x = x_lo + (1 - exp(-u_n)) (x_e - x_lo), x_lo the bed's inlet,
        or where its adiabat reaches the next inlet temperature when that is hotter:
        u = -ln(1 - (x - x_lo)/(x_e - x_lo)) resolves the approach to the bed's
        equilibrium (u = inf) as the bed integral does.
        """
        g, temps = self.gas, self.inlet_temperatures_k
        x_in, x_e, out = 0.0, self._first_equilibrium, []
        for n, u in enumerate(advances):
            t_n, t_next = temps[n], temps[n + 1]
            x_lo = x_in if t_next <= t_n else g.conversion_on_adiabat(x_in, t_n, t_next)
            if not x_lo < x_e:
                return None
            x = x_lo + -math.expm1(-max(float(u), 0.0)) * (x_e - x_lo)
            t_out = float(g.temperature_k(x_in, t_n, x)[0]) if x > x_in else t_n
            q = max(self.quench_per_gas(x, t_out, t_next), 0.0)
            out.append((x_in, x_e, x, t_out, q))
            x_in = x / (1.0 + q)
            x_e = g.equilibrium_conversion(x_in, temps[n + 1])
        return [*out, (x_in, x_e)]

    def _total(self, advances, conversion: float) -> float:
        """W of the advances at an overall conversion [m3 h/kmol]; ``_MISSED`` and more where
        the arrangement cannot be built or cannot reach the conversion."""
        chain = self._chain(advances)
        if chain is None:
            return 2.0 * _MISSED
        (x_in, x_e), t_last = chain[-1], self.inlet_temperatures_k[-1]
        if not x_in <= conversion < x_e:
            return _MISSED * (1.0 + max(x_in - conversion, conversion - x_e))
        share, total = 1.0, self.gas.bed_volume_per_feed_m3_h_kmol(x_in, t_last, conversion, x_e)
        for n in range(len(chain) - 2, -1, -1):
            x0, xe, x, _, q = chain[n]
            share /= 1.0 + q
            total += share * self.gas.bed_volume_per_feed_m3_h_kmol(
                x0, self.inlet_temperatures_k[n], x, xe)
        return total

    def attainable_conversion(self) -> float:
        """The largest per-pass conversion the beds approach, every bed run to its adiabatic
        equilibrium: the last bed's adiabatic equilibrium then [-].

        The overall conversion at a quench point, x / (1 + q(x)), grows with the
        bed's outlet conversion x (the outlet's enthalpy above the feed's at its
        own conversion stays positive), and a bed's adiabatic equilibrium grows
        with its inlet conversion at a set inlet temperature (a cooler adiabat
        meets the equilibrium curve of an exothermic reaction later); 0 where a
        bed cannot heat to the next inlet temperature.
        """
        chain = self._chain([math.inf] * (len(self.inlet_temperatures_k) - 1))
        return 0.0 if chain is None else float(chain[-1][1])

    def least_conversion(self) -> float:
        """The least per-pass conversion the beds can run at, every bed before the last as
        short as it can be (not used, or just heating to the next inlet temperature): the
        conversion at the last quench point [-]; below it the catalyst is infinite."""
        chain = self._chain([0.0] * (len(self.inlet_temperatures_k) - 1))
        return math.inf if chain is None else float(chain[-1][0])

    def advances(self, conversion: float) -> tuple[float, ...] | None:
        """The advances u_n of beds 1 to N - 1 (:meth:`_chain`) of least catalyst at an
        overall conversion, None where no arrangement reaches it.

        A coarse search first (every bed advanced alike, and with more than two
        beds one bed at a time with the others not used), then SciPy's bounded
        Brent method (two beds) or Nelder-Mead (more) from the best of them; the
        least W, stationary in every boundary, is what :meth:`split` reports.
        """
        from scipy.optimize import minimize, minimize_scalar  # as in AdiabaticBeds

        n = len(self.inlet_temperatures_k) - 1
        grid = (0.0, 0.35, 0.9, 1.6, 2.3, 3.5, 5.0, 7.0, 10.0, 14.0, 19.0, 25.0)
        # every bed advanced alike, and (more than two beds) one bed at a time, the others
        # not used: the least catalyst may leave beds unused
        starts = [(u,) * n for u in grid]
        if n > 1:
            starts += [tuple(u if m == k else 0.0 for m in range(n))
                       for k in range(n) for u in grid[1:]]
        values = [self._total(s, conversion) for s in starts]
        j = int(np.argmin(values))
        if values[j] >= _MISSED:
            return None
        if n == 1:
            lo, hi = grid[max(j - 1, 0)], grid[j + 1] if j + 1 < len(grid) else _U_MAX
            res = minimize_scalar(lambda u: self._total((u,), conversion), bounds=(lo, hi),
                                  method="bounded", options={"xatol": 1e-10, "maxiter": 200})
        else:
            res = minimize(lambda u: self._total(u, conversion), np.array(starts[j]),
                           method="Nelder-Mead", bounds=[(0.0, _U_MAX)] * n,
                           options={"xatol": 1e-9, "fatol": 1e-16, "maxiter": 400 * n})
        best = tuple(float(v) for v in np.atleast_1d(res.x))
        return best if self._total(best, conversion) <= values[j] else starts[j]

    @functools.cached_property
    def _splits(self) -> dict:
        """The splits found, by overall conversion (a state asks for its catalyst and for its
        table of beds at the same conversion)."""
        return {}

    def split(self, conversion: float) -> list[Bed]:
        """The beds at an overall per-pass conversion X, bed by bed in flow order, for the
        advances of :meth:`advances`; conversions counted from the converter feed.

        Where no arrangement reaches X, the beds every one run to their adiabatic
        equilibrium (X at or beyond what they approach) or each the least (X below
        what the quench leaves at the last bed's inlet), the last bed's catalyst
        infinite.
        """
        key = float(conversion)
        if key not in self._splits:
            self._splits[key] = self._split(key)
        return list(self._splits[key])

    def _split(self, conversion: float) -> list[Bed]:
        f = self.advances(conversion)
        reached = f is not None
        if not reached:
            f = (math.inf if conversion >= self.attainable_conversion() else 0.0,) * (
                len(self.inlet_temperatures_k) - 1)
        chain = self._chain(f)
        temps = self.inlet_temperatures_k
        if chain is None:   # bed n cannot heat to the next inlet: nothing reaches any X
            return [Bed(t, t, 0.0, 0.0, 0.0, math.inf if n == len(temps) - 1 else 0.0,
                        1.0 if n == 0 else 0.0) for n, t in enumerate(temps)]
        x_in, x_e = chain[-1]
        last = (self.gas.bed_volume_per_feed_m3_h_kmol(x_in, temps[-1], conversion, x_e)
                if reached else math.inf)
        x_out = min(max(conversion, x_in), x_e)
        t_out = (float(self.gas.temperature_k(x_in, temps[-1], x_out)[0]) if x_out > x_in
                 else temps[-1])
        beds = [Bed(temps[-1], t_out, x_in, conversion, x_e, last, None)]
        share = 1.0
        for n in range(len(chain) - 2, -1, -1):
            x0, xe, x, t, q = chain[n]
            beds[0] = dataclasses.replace(beds[0], feed_share=share * q / (1.0 + q))
            share /= 1.0 + q
            volume = share * self.gas.bed_volume_per_feed_m3_h_kmol(x0, temps[n], x, xe)
            beds.insert(0, Bed(temps[n], t, share * x0, share * x, share * xe, volume, None))
        beds[0] = dataclasses.replace(beds[0], feed_share=share)
        return beds

    def volume_per_feed_m3_h_kmol(self, conversion: float) -> float:
        """Total catalyst of the beds per kmol/h of converter feed at conversion X [m3 h/kmol]."""
        return sum(b.volume_per_feed_m3_h_kmol for b in self.split(conversion))
