"""Resistance of wires, rails and wheel contacts.

Copper wire
    ASTM B258 diameter ``d(n) = 0.127 mm * 92**((36 - n) / 39)`` and IEC 60028
    annealed-copper resistivity ``1/58 ohm mm^2/m`` at 20 C, with the IEC 60028
    temperature coefficient ``0.00393 /K``:
    ``R/L = rho (1 + alpha (T - 20 C)) / (pi d^2 / 4)``.
Rail
    ``R/L = rho / A`` from a material of :mod:`sim.circuit.materials` and the
    rail's cross-section area, or the given ``ohm/m``.
Wire pairs
    A :class:`~sim.model.Wire` length is one way; a feed pair has two
    conductors, so :func:`wire_r_ohm` counts the length twice.
"""
from __future__ import annotations

import math

from sim.circuit.materials import ALPHA_COPPER_PER_K, RHO_COPPER_OHM_M, material
from sim.model import Rail, Track, Wire


def awg_diameter_m(awg: float) -> float:
    """ASTM B258 diameter of an AWG gauge: ``0.127 mm * 92**((36 - n)/39)``.

    Gauges 0, 00, 000, 0000 are ``0, -1, -2, -3``.
    """
    return 0.127e-3 * 92.0 ** ((36.0 - float(awg)) / 39.0)


def copper_rho_ohm_m(temperature_c: float = 20.0) -> float:
    """Annealed copper resistivity (IEC 60028) at ``temperature_c``, linear in T."""
    return RHO_COPPER_OHM_M * (1.0 + ALPHA_COPPER_PER_K * (temperature_c - 20.0))


def awg_r_per_m_ohm(awg: float, temperature_c: float = 20.0) -> float:
    """Resistance per metre of ONE solid copper conductor of gauge ``awg``.

    Examples
    --------
    >>> round(awg_r_per_m_ohm(14) * 304.8, 3)   # ohm per 1000 ft
    2.525
    """
    d_m = awg_diameter_m(awg)
    return copper_rho_ohm_m(temperature_c) / (math.pi * d_m * d_m / 4.0)


def conductor_r_per_m_ohm(wire: Wire) -> float:
    """Resistance per metre of one conductor of ``wire`` (0 when negligible)."""
    if wire.r_per_m_ohm is not None:
        return float(wire.r_per_m_ohm)
    if wire.awg is not None:
        return awg_r_per_m_ohm(wire.awg, wire.temperature_c)
    return 0.0


def wire_r_ohm(wire: Wire) -> float:
    """Loop resistance of a wire pair: both conductors, ``2 * length * r/m``."""
    return 2.0 * wire.length_m * conductor_r_per_m_ohm(wire)


def rail_r_per_m_ohm(rail: Rail) -> float:
    """Resistance per metre of one rail: the given ohm/m, else ``rho / area``.

    Raises
    ------
    KeyError
        When the material is unknown.
    ValueError
        When neither a resistance nor a material with a positive area is given.
    """
    if rail.r_per_m_ohm is not None:
        return float(rail.r_per_m_ohm)
    if rail.material is None or not rail.area_m2 or rail.area_m2 <= 0.0:
        raise ValueError("a rail needs a resistance per metre, or a material and an area")
    return material(rail.material).rho_ohm_m / float(rail.area_m2)


def wheel_contact_r_ohm(track: Track, contacts: int = 1) -> float:
    """Resistance of ``contacts`` wheel-rail contacts in series."""
    return contacts * track.r_wheel_contact_ohm


def bridge_r_ohm(track: Track, r_join_ohm: float = 0.0) -> float:
    """Resistance of a wheel path bridging a gap: a contact on each rail end plus the join.

    A wheel set or a pickup group that spans a gap touches the rail on both
    sides of it, so the path has two wheel contacts in series with whatever
    joins them (``r_join_ohm``: zero for one wheel, a lighted car's resistor).
    """
    return 2.0 * track.r_wheel_contact_ohm + r_join_ohm
