"""Resolution targets of scale-resolving simulation (LES, DNS) and their published cell counts.

One table (``KINDS``) drives the case validation, the sizing defaults and the listing a user
sees. A kind gives, in wall units (length nu_w / u_tau) or in boundary-layer thicknesses:

* wall-resolved LES: first cell y+ <= 1, streamwise dx+ 50 to 150, spanwise dz+ 15 to 40
  (Georgiadis, Rizzetta & Fureby (2010), "Large-eddy simulation: current capabilities,
  recommended practices, and future research", AIAA J. 48(8) 1772-1784; Piomelli & Chasnov
  (1996), "Large-eddy simulations: theory and applications", in Turbulence and Transition
  Modelling, Kluwer: ranges from memory, the papers' tables were not read). Defaults dx+ = 100,
  dz+ = 20 (the spacings behind Chapman's and Choi & Moin's wall-resolved estimates, from
  memory). The outer part of the layer is sized on delta: delta99 / 30 (common practice,
  finer than the delta99 / 20 of a wall-modelled LES).
* wall-modelled LES: cells of delta99/15 to delta99/30 in every direction, down to the
  wall ("typical cell sizes that can be found in the literature", documentation of the
  libWallModelledLES library, grid construction page: text read); default delta99 / 20.
* DNS: first cell y+ <= 1, dx+ 10 to 20, dz+ 5 to 10 (common practice, e.g. Kim, Moin &
  Moser (1987), J. Fluid Mech. 177, 133-166: 192 x 129 x 160 points (abstract, read) in a
  4 pi h x 2 h x 2 pi h channel at Re_tau = 180 (from memory), so dx+ = 11.8, dz+ = 7.1);
  defaults dx+ = 12, dz+ = 6. Wall-normal cells stay at or below dz+ through the whole layer.

Cell counts (Choi & Moin (2012), "Grid-point requirements for large eddy simulation:
Chapman's estimates revisited", Phys. Fluids 24, 011702: text of the exponents via the
references table and the abstract of Yang & Griffin (2021), Phys. Fluids 33, 015108,
arXiv 2010.15307, which quotes N ~ Re_Lx^2.64 for their DNS estimate and derives
N ~ Re_Lx^2.05 with spacing scaled on the local Kolmogorov length):

    wall-resolved LES  N ~ Re_L^(13/7)     wall-modelled LES  N ~ Re_L     DNS  N ~ Re_L^(37/14)

Choi & Moin count points of a grid refined locally with x (the spacing follows the local
u_tau or delta everywhere), for a plate whose span is a fixed fraction of its length (from
memory). A single structured block keeps its spacing along the span and through the height,
so its count follows these exponents only where the same assumptions hold; the plan reports
both (``meshgen.planning.resolved``).
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Target:
    """A default value and the published (or common-practice) range it sits in."""

    default: float
    low: float
    high: float
    source: str


@dataclass(frozen=True)
class ResolutionKind:
    """What a simulation kind asks of the grid; None where the kind does not use the quantity.

    ``dx_plus``, ``dz_plus``: wall-parallel spacing in wall units. ``cells_per_delta``: cells
    per delta99 (wall-modelled LES: every direction; wall-resolved LES: the wall-normal
    spacing in the outer part of the layer). ``first_y_plus``: the largest first-cell y+
    the kind accepts (None: the first cell follows delta, not wall units).
    ``choi_moin_exponent``: N ~ Re_L^exponent (Choi & Moin 2012).
    """

    name: str
    description: str
    first_y_plus: float | None
    dx_plus: Target | None
    dz_plus: Target | None
    cells_per_delta: Target | None
    choi_moin_exponent: float | None
    exponent_text: str


_LES_SOURCE = ("Georgiadis, Rizzetta & Fureby (2010) AIAA J. 48(8); Piomelli & Chasnov (1996): "
               "ranges from memory")
_DNS_SOURCE = "common practice (e.g. Kim, Moin & Moser 1987 channel: dx+ 11.8, dz+ 7.1)"
_WM_SOURCE = "common practice: delta/15 to delta/30 (libWallModelledLES documentation, grid construction)"
_CM = "Choi & Moin (2012), Phys. Fluids 24, 011702"

KINDS: dict[str, ResolutionKind] = {
    k.name: k
    for k in (
        ResolutionKind("rans", "Reynolds-averaged: the first cell only (wall.y_plus)", None, None, None, None,
                       None, ""),
        ResolutionKind(
            "wall-resolved-les", "wall-resolved LES: near-wall streaks resolved in wall units", 1.0,
            Target(100.0, 50.0, 150.0, _LES_SOURCE), Target(20.0, 15.0, 40.0, _LES_SOURCE),
            Target(30.0, 20.0, 40.0, "common practice: outer layer on delta99/30, finer than a wall-modelled LES"),
            13.0 / 7.0, "13/7",
        ),
        ResolutionKind(
            "wall-modelled-les", "wall-modelled LES: the outer layer resolved, the inner layer modelled", None,
            None, None, Target(20.0, 15.0, 30.0, _WM_SOURCE), 1.0, "1",
        ),
        ResolutionKind(
            "dns", "direct numerical simulation: every scale resolved", 1.0,
            Target(12.0, 10.0, 20.0, _DNS_SOURCE), Target(6.0, 5.0, 10.0, _DNS_SOURCE), None,
            37.0 / 14.0, "37/14",
        ),
    )
}

#: The spanwise extent in delta99 at the plate end when the case gives none (common practice:
#: the largest outer-layer eddies are about one delta wide, and the span should hold several,
#: so that spanwise two-point correlations fall to zero within half of it).
DEFAULT_SPAN_DELTAS = 4.0
#: Source text of the cell-count exponents.
CHOI_MOIN = _CM


def kind(name: str) -> ResolutionKind:
    """The table entry of ``name`` (KeyError names the valid ones)."""
    try:
        return KINDS[name]
    except KeyError:
        raise KeyError(f"unknown resolution kind {name!r}; valid: {', '.join(KINDS)}") from None


def scale_resolving(name: str) -> bool:
    """True for the kinds that size all three directions (everything but RANS)."""
    return name != "rans"
