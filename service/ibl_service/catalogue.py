"""Wire types of the method catalogue (``GET /v1/methods``), for its OpenAPI schema.

The library builds the catalogue as plain JSON-ready data (``ibl.registry.catalogue``);
these types describe that data member by member, so that the document gives generated
clients typed members rather than "an object". The service test converts the served
catalogue to ``MethodCatalogue``: a member added to one and not the other fails there.
An unbounded end of a validity range is null.
"""

from __future__ import annotations

import msgspec

__all__ = ["MethodCatalogue"]


class _Entry(msgspec.Struct, forbid_unknown_fields=True, frozen=True, kw_only=True):
    """Base of the catalogue types: unknown members are errors."""


class CatalogueRange(_Entry, frozen=True):
    """A validity range of one quantity; null for an unbounded end."""

    min: float | None
    max: float | None


class CatalogueChoice(_Entry, frozen=True):
    """One choice of a method option: where it is valid, and its source."""

    validity: dict[str, CatalogueRange]
    reference: str


class CatalogueDefault(_Entry, frozen=True):
    """An option given by its default value alone, with an optional note."""

    default: float
    note: str | None = None


class CatalogueNumberOption(_Entry, frozen=True):
    """A numeric option: its default and the published values, each with its source."""

    default: float
    choices: dict[str, str]
    note: str | None = None


class CatalogueNamedOption(_Entry, frozen=True):
    """An option naming a law or closure: its default and each choice."""

    default: str
    choices: dict[str, CatalogueChoice]
    note: str | None = None


class CatalogueFiniteDifferenceGrid(_Entry, frozen=True):
    """The grid across the layer of the finite-difference laminar method."""

    eta_points: int
    eta_max: float
    eta_stretch: float


class CatalogueLaminarMethod(_Entry, frozen=True):
    """One laminar method: what it does and its source."""

    summary: str
    reference: str
    grid: CatalogueFiniteDifferenceGrid | None = None
    accuracy: str | None = None


class CatalogueLaminarMethodOption(_Entry, frozen=True):
    """The choice of laminar method (``laminar.method``)."""

    default: str
    choices: dict[str, CatalogueLaminarMethod]


class CatalogueLaminarOptions(_Entry, frozen=True):
    method: CatalogueLaminarMethodOption
    separation_lambda: CatalogueNumberOption
    closure: CatalogueNamedOption


class CatalogueLaminar(_Entry, frozen=True):
    """The laminar method."""

    method: str
    summary: str
    reference: str
    options: CatalogueLaminarOptions


class CatalogueCriterion(_Entry, frozen=True):
    """A transition criterion."""

    summary: str
    validity: dict[str, CatalogueRange]
    reference: str


class CatalogueBubble(_Entry, frozen=True):
    """The laminar separation bubble criterion."""

    criterion: str
    summary: str
    re_delta_star_threshold: float
    reference: str


class CatalogueTransition(_Entry, frozen=True):
    """Transition criteria, their default, trips and the bubble criterion."""

    default: str
    criteria: dict[str, CatalogueCriterion]
    trip: str
    laminar_separation_bubble: CatalogueBubble


class CatalogueMethodChoice(_Entry, frozen=True):
    """One turbulent method: its name in results, summary, source and skin friction."""

    name: str
    summary: str
    reference: str
    skin_friction: str


class CatalogueMethodOption(_Entry, frozen=True):
    """The turbulent method: its default and each choice."""

    default: str
    choices: dict[str, CatalogueMethodChoice]


class CatalogueTurbulentOptions(_Entry, frozen=True):
    method: CatalogueMethodOption
    initial_shape_factor: CatalogueDefault
    separation_shape_factor: CatalogueDefault
    skin_friction: CatalogueNamedOption


class CatalogueTurbulent(_Entry, frozen=True):
    """The turbulent method."""

    method: str
    summary: str
    reference: str
    options: CatalogueTurbulentOptions


class CataloguePlateauThresholds(_Entry, frozen=True):
    band_of_cp_range: float
    min_length_of_side: float
    min_points: int
    min_turning_deg: float


class CataloguePlateau(_Entry, frozen=True):
    """The pressure-plateau check."""

    default: bool
    summary: str
    thresholds: CataloguePlateauThresholds
    reference: str


class CatalogueSeparation(_Entry, frozen=True):
    pressure_plateau: CataloguePlateau
    near_separation_fraction: float


class CatalogueMesh(_Entry, frozen=True):
    """Near-wall mesh advice: the default y+ targets and how each quantity is estimated."""

    y_plus_default: list[float]
    first_cell_height: str
    thickness: str
    eddy_viscosity: str


class CatalogueEdgeVelocity(_Entry, frozen=True):
    """How the edge velocity follows from the pressure."""

    incompressible: str
    compressible: str


class MethodCatalogue(_Entry, frozen=True):
    """Every method and criterion with its options, defaults, validity ranges and sources."""

    laminar: CatalogueLaminar
    transition: CatalogueTransition
    turbulent: CatalogueTurbulent
    separation: CatalogueSeparation
    mesh: CatalogueMesh
    edge_velocity: CatalogueEdgeVelocity
