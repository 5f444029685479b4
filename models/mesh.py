"""The grid of the transient model: nodes through every solid and skin layer, massless links.

The nodes are ordered hot (exposed) side → wearer side. Consecutive nodes are joined by one
link, so link ``j`` joins nodes ``j`` and ``j + 1``; a link is a slice of a solid or skin layer
(conduction), a contact resistance, or an air gap (massless: the steady gap law). Every
interface of the assembly is a node, and so are the skin's basal depth (epidermis–dermis
interface) and the base of the dermis, exactly. A node's control volume is half of each
adjoining slice (a vertex-centred finite-volume grid).

Within a layer the slices are refined toward both faces by geometric growth: the first slice
is ``FIRST_CELL_FACTOR * sqrt(alpha * FIRST_CELL_TIME)`` thick, each next one ``GROWTH`` times
the previous, capped at ``MAX_CELL_FACTOR * sqrt(alpha * horizon)`` (the penetration depth over
the horizon). A solid thinner than its penetration depth over the horizon (a fabric) starts
from ``THIN_FIRST_CELL_FACTOR`` and grows by ``THIN_GROWTH``. The dermis and the subcutis are
refined from their top only (their bases see mild gradients; the subcutis base is held at the
core temperature), the subcutis with the thin-solid rule and its slices growing by
``DEEP_GROWTH`` beyond the penetration depth. The
numbers of slices (the :class:`MeshLayout`) come from the worst case over all samples,
so one layout serves every chunk of a study and a sample's grid never depends on its batch.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from plyrisk.models.stack import Gap, Solid
from plyrisk.models.wearer import SensorWearer, SkinLayerProperties, SkinWearer, Wearer

FIRST_CELL_FACTOR = 0.05
"""First slice at a face, as a fraction of ``sqrt(alpha * FIRST_CELL_TIME)`` [-]."""
FIRST_CELL_TIME = 1.0
"""Time whose penetration depth sets the first slice [s]."""
GROWTH = 1.12
"""Ratio of consecutive slice thicknesses away from a face [-]."""
DEEP_GROWTH = 1.5
"""Growth of the slices of a one-sided layer beyond the penetration depth [-]."""
THIN_FIRST_CELL_FACTOR = 0.1
"""First slice in a thin solid (thinner than its penetration depth over the horizon: a
fabric), whose through-flux matters more than its steepest early gradient [-]."""
THIN_GROWTH = 1.25
"""Growth of the slices in a thin solid, and in the subcutis (deep, mild gradients) [-]."""
MAX_CELL_FACTOR = 0.25
"""Largest slice, as a fraction of the penetration depth ``sqrt(alpha * horizon)`` [-]."""

PartSource = Solid | Gap | SkinLayerProperties | Wearer
"""What a :class:`Part` stands for: a solid (its slices, or the contact after it), a gap, a
skin layer, or the wearer (its contact, the sensor, the prescribed surface)."""


@dataclass(frozen=True)
class MeshLayout:
    """Relative slice boundaries of every meshed layer, shared by all samples.

    Attributes
    ----------
    names
        Meshed layers, hot side first (the assembly's solids, then the skin layers) [-].
    fractions
        Per layer, the slice boundaries as fractions of its thickness, from 0 to 1 [-].
    """

    names: tuple[str, ...]
    fractions: tuple[tuple[float, ...], ...]

    def cells(self) -> dict[str, int]:
        """Number of slices per layer."""
        return {n: len(f) - 1 for n, f in zip(self.names, self.fractions, strict=True)}


@dataclass(frozen=True)
class Part:
    """A stretch of the node chain: a layer, a contact, a gap or the wearer's node.

    Attributes
    ----------
    kind
        ``"solid"``, ``"skin"``, ``"contact"``, ``"gap"``, ``"sensor"`` or ``"prescribed"`` [-].
    name
        Label [-].
    first, last
        First and last node (links ``first .. last - 1`` belong to the part) [-].
    source
        The layer, skin-layer dictionary or wearer the part stands for (:data:`PartSource`):
        a :class:`~plyrisk.models.stack.Solid` for ``"solid"``, a
        :class:`~plyrisk.models.stack.Gap` for ``"gap"``, a
        :class:`~plyrisk.models.wearer.SkinLayerProperties` for ``"skin"``, the solid before
        it or the wearer for ``"contact"``, the wearer for ``"sensor"`` and ``"prescribed"`` [-].
    """

    kind: str
    name: str
    first: int
    last: int
    source: PartSource


@dataclass(frozen=True)
class Mesh:
    """The node chain for ``n`` samples.

    Attributes
    ----------
    layout
        The slice layout [-].
    parts
        Stretches of the chain, hot side first [-].
    node_depth
        Depth of each node below the exposed face, gaps included, shape ``(nodes, n)`` [m].
    face_nodes, face_names
        Nodes and names of the assembly's faces and the wearer's surface [-].
    surface_node
        The wearer's surface node (skin surface, sensor, prescribed surface) [-].
    basal_node, dermis_base_node
        Skin's epidermis–dermis interface and dermis base, or ``None`` [-].
    fixed_nodes
        Nodes held at a prescribed temperature [-].
    """

    layout: MeshLayout
    parts: tuple[Part, ...]
    node_depth: np.ndarray
    face_nodes: tuple[int, ...]
    face_names: tuple[str, ...]
    surface_node: int
    basal_node: int | None
    dermis_base_node: int | None
    fixed_nodes: tuple[int, ...]

    @property
    def nodes(self) -> int:
        """Number of nodes [-]."""
        return self.node_depth.shape[0]


def _diffusivity(conductivity: ArrayLike, density: ArrayLike | None,
                 specific_heat: ArrayLike | None) -> NDArray[np.float64]:
    return np.asarray(conductivity, float) / (
        np.asarray(density, float) * np.asarray(specific_heat, float)
    )


def _meshed_layers(layers: Sequence[Solid | Gap], wearer: Wearer, horizon: float
                   ) -> list[tuple[str, ArrayLike, NDArray[np.float64], bool, bool]]:
    """(name, thickness, diffusivity, two_sided, thin) of every layer that gets slices."""
    out: list[tuple[str, ArrayLike, NDArray[np.float64], bool, bool]] = []
    for layer in layers:
        if isinstance(layer, Solid):
            alpha = _diffusivity(layer.conductivity, layer.density, layer.specific_heat)
            thin = bool(np.max(np.asarray(layer.thickness, float) / np.sqrt(alpha * horizon))
                        < 1.0)
            out.append((layer.name, layer.thickness, alpha, True, thin))
    if isinstance(wearer, SkinWearer):
        skin_layers = wearer.layers()
        for i, sl in enumerate(skin_layers):
            alpha = _diffusivity(sl["conductivity"], sl["density"], sl["specific_heat"])
            out.append((sl["name"], sl["thickness"], alpha, i == 0, i == 2))
    return out


def relative_slices(thickness: ArrayLike, diffusivity: ArrayLike, horizon: float, *,
                    two_sided: bool = True,
                    refinement: int = 1, first_cell_factor: float | None = None,
                    growth: float | None = None) -> tuple[float, ...]:
    """Slice boundaries of one layer as fractions of its thickness, fine enough for all samples.

    Parameters
    ----------
    thickness
        Layer thickness, scalar or per sample [m].
    diffusivity
        Thermal diffusivity, scalar or per sample [m2 s-1].
    horizon
        Simulated time [s].
    two_sided
        Refine toward both faces (else from the hot face only) [-].
    refinement
        Split every slice into this many equal ones (a grid-refinement study) [-].

    Returns
    -------
    tuple of float
        Increasing fractions from 0 to 1.
    """
    L = np.asarray(thickness, float)
    alpha = np.asarray(diffusivity, float)
    factor = FIRST_CELL_FACTOR if first_cell_factor is None else first_cell_factor
    ratio = GROWTH if growth is None else growth
    first = np.min(factor * np.sqrt(alpha * FIRST_CELL_TIME) / L)
    largest = np.min(MAX_CELL_FACTOR * np.sqrt(alpha * horizon) / L)
    largest = max(largest, first)
    span = 0.5 if two_sided else 1.0
    grown: list[float] = []
    total = 0.0
    size = first
    deep = np.min(np.sqrt(alpha * horizon) / L)  # penetration depth over the horizon
    while total < span * (1.0 - 1e-9):
        if not two_sided and total > deep:  # nothing to resolve here: grow fast
            size = max(size, largest) * DEEP_GROWTH
            grown.append(size)
        else:
            grown.append(min(size, largest))
            size *= ratio
        total += grown[-1]
    sizes = np.asarray(grown) * (span / total)  # fill the span exactly
    if two_sided:
        # join the two halves; merge the two middle slices when they are small
        sizes = np.concatenate([sizes, sizes[::-1]])
        if sizes.size >= 4:
            mid = sizes.size // 2
            sizes = np.concatenate([sizes[: mid - 1], [sizes[mid - 1] + sizes[mid]],
                                    sizes[mid + 1:]])
    if refinement > 1:
        sizes = np.repeat(sizes / refinement, refinement)
    edges = np.concatenate([[0.0], np.cumsum(sizes)])
    edges /= edges[-1]
    edges[-1] = 1.0
    return tuple(float(x) for x in edges)


def mesh_layout(layers: Sequence[Solid | Gap], wearer: Wearer, horizon: float, *,
                refinement: int = 1) -> MeshLayout:
    """The slice layout of every meshed layer, from all samples' thicknesses and diffusivities.

    Parameters
    ----------
    layers
        Solids and gaps, hot side first [-].
    wearer
        The wearer side (:mod:`plyrisk.models.wearer`) [-].
    horizon
        Simulated time [s].
    refinement
        Split every slice into this many equal ones [-].

    Returns
    -------
    MeshLayout
    """
    names: list[str] = []
    fractions: list[tuple[float, ...]] = []
    for name, L, alpha, two_sided, thin in _meshed_layers(layers, wearer, horizon):
        names.append(name)
        fractions.append(relative_slices(
            L, alpha, horizon, two_sided=two_sided, refinement=int(refinement),
            first_cell_factor=THIN_FIRST_CELL_FACTOR if thin else None,
            growth=THIN_GROWTH if thin else None))
    return MeshLayout(tuple(names), tuple(fractions))


def build_mesh(layers: Sequence[Solid | Gap], wearer: Wearer, layout: MeshLayout,
               n: int) -> Mesh:
    """The node chain of the assembly and wearer for ``n`` samples on a given layout.

    Parameters
    ----------
    layers
        Solids and gaps, hot side first [-].
    wearer
        The wearer side [-].
    layout
        Slice layout from :func:`mesh_layout` [-].
    n
        Samples [-].

    Returns
    -------
    Mesh
    """
    fractions = dict(zip(layout.names, layout.fractions, strict=True))
    parts: list[Part] = []
    depth: list[np.ndarray] = [np.zeros(n)]
    face_nodes, face_names = [0], ["exposed face"]
    node = 0

    def add_slices(kind: str, name: str, L: ArrayLike, source: PartSource) -> None:
        nonlocal node
        fr = np.asarray(fractions[name])
        start = depth[-1]
        L = np.broadcast_to(np.asarray(L, float), (n,))
        for x in fr[1:]:
            depth.append(start + x * L)
        parts.append(Part(kind, name, node, node + fr.size - 1, source))
        node += fr.size - 1

    def add_link(kind: str, name: str, width: ArrayLike, source: PartSource) -> None:
        nonlocal node
        depth.append(depth[-1] + np.broadcast_to(np.asarray(width, float), (n,)))
        parts.append(Part(kind, name, node, node + 1, source))
        node += 1

    for i, layer in enumerate(layers):
        if isinstance(layer, Solid):
            prev = layers[i - 1] if i > 0 else None
            if isinstance(prev, Solid) and prev.contact_resistance is not None:
                add_link("contact", f"{prev.name} contact", 0.0, prev)
                face_nodes.append(node)
                face_names.append(f"{layer.name} hot face")
            add_slices("solid", layer.name, layer.thickness, layer)
        else:
            add_link("gap", layer.name, layer.width, layer)
        face_nodes.append(node)
        nxt = layers[i + 1] if i + 1 < len(layers) else None
        if nxt is None:
            face_names.append("inner face" if isinstance(layer, Solid) else "wearer surface")
        elif isinstance(layer, Solid) and layer.contact_resistance is not None:
            face_names.append(f"{layer.name} cold face")
        else:
            face_names.append(f"{layer.name} | {nxt.name}")
    if layers and isinstance(layers[-1], Solid) and wearer.contact_resistance is not None:
        add_link("contact", "wearer contact", 0.0, wearer)
        face_nodes.append(node)
        face_names.append("wearer surface")
    elif layers and isinstance(layers[-1], Solid):
        face_names[-1] = "wearer surface"  # the last solid touches the wearer
    else:
        face_names[-1] = "wearer surface"
    surface = node
    basal = dermis_base = None
    fixed: list[int] = []
    if isinstance(wearer, SkinWearer):
        skin_layers = wearer.layers()
        for j, sl in enumerate(skin_layers):
            add_slices("skin", sl["name"], sl["thickness"], sl)
            if j == 0:
                basal = node
            elif j == 1:
                dermis_base = node
        fixed.append(node)
    elif isinstance(wearer, SensorWearer):
        parts.append(Part("sensor", "sensor", node, node, wearer))
    else:
        parts.append(Part("prescribed", "prescribed", node, node, wearer))
        fixed.append(node)
    return Mesh(
        layout=layout,
        parts=tuple(parts),
        node_depth=np.stack(depth),
        face_nodes=tuple(face_nodes),
        face_names=tuple(face_names),
        surface_node=surface,
        basal_node=basal,
        dermis_base_node=dermis_base,
        fixed_nodes=tuple(fixed),
    )

