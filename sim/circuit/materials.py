"""Rail and wire conductor materials: resistivity at 20 C.

Each value names where it comes from (see ``shared/design/references.md``);
"from memory" marks a value nobody here has read in print.

========================  =====================  ==============================================
material (keys accepted)  rho / (ohm mm^2/m)     source
========================  =====================  ==============================================
copper                    1/58 = 0.017241        IEC 60028 (International Annealed Copper
                                                 Standard), 20 C; alpha 0.00393 /K
brass (C26000, 70/30)     0.0616                 Copper Development Association alloy data:
                                                 28 % IACS, 6.16 micro-ohm cm
nickel-silver             0.303                  manufacturer data sheet of CuNi18Zn20, about
  (CuNi18Zn20)                                   5.5 % IACS (secondary)
nickel-silver-c75200      0.287                  C75200, about 6 % IACS, 28.7 micro-ohm cm
                                                 (from memory)
steel (carbon, 1010)      0.143                  encyclopedia-level table, 1.43e-7 ohm m
                                                 (secondary)
========================  =====================  ==============================================

Resistivities are stored in ohm m (SI): ``1 ohm mm^2/m = 1e-6 ohm m``.
"""
from __future__ import annotations

from dataclasses import dataclass
from types import MappingProxyType
from typing import Mapping, Optional


@dataclass(frozen=True)
class Material:
    """A conductor material: resistivity at 20 C and where the value comes from."""

    name: str
    rho_ohm_m: float
    source: str
    alpha_per_k: Optional[float] = None  # temperature coefficient near 20 C, when known


#: IEC 60028: annealed copper, 1/58 ohm mm^2/m at 20 C, 0.00393 /K.
RHO_COPPER_OHM_M = 1.0e-6 / 58.0
ALPHA_COPPER_PER_K = 0.00393

MATERIALS: Mapping[str, Material] = MappingProxyType({
    "copper": Material("copper", RHO_COPPER_OHM_M, "IEC 60028 (annealed copper, 20 C)",
                       ALPHA_COPPER_PER_K),
    "brass": Material("brass", 6.16e-8,
                      "Copper Development Association, C26000: 28 % IACS, 6.16 micro-ohm cm"),
    "nickel-silver": Material("nickel-silver", 0.303e-6,
                              "CuNi18Zn20 manufacturer data sheet, 0.303 ohm mm2/m (secondary)"),
    "nickel-silver-c75200": Material("nickel-silver-c75200", 28.7e-8,
                                     "C75200, 28.7 micro-ohm cm (from memory)"),
    "steel": Material("steel", 1.43e-7, "carbon steel 1010, 1.43e-7 ohm m (secondary)"),
})

_ALIASES = {
    "cu": "copper", "annealed-copper": "copper",
    "brass-c26000": "brass", "c26000": "brass", "cartridge-brass": "brass",
    "nickel silver": "nickel-silver", "nickelsilver": "nickel-silver", "ns": "nickel-silver",
    "cuni18zn20": "nickel-silver", "c75200": "nickel-silver-c75200",
    "carbon-steel": "steel", "steel-1010": "steel",
}


def material(name: str) -> Material:
    """The :class:`Material` called ``name`` (case-insensitive, a few aliases).

    Raises
    ------
    KeyError
        For a material not in :data:`MATERIALS`; the message lists the known ones.
    """
    key = name.strip().lower().replace("_", "-")
    key = _ALIASES.get(key, key)
    if key not in MATERIALS:
        raise KeyError(f"unknown rail material {name!r}; known: {', '.join(MATERIALS)}")
    return MATERIALS[key]
