"""Predicted 1H multiplicities: first-order patterns from typical coupling constants.

Each proton class couples to the partners perception found (``rank.predict.perceive``),
with the typical J of the coupling's kind (``rules/coupling.tsv``), when that coupling is
seen in the solvent.  The pattern is first order, the n+1 rule over groups of equal J,
or ``m`` where partners lie too close in Hz for first-order analysis at the field, in
flexible rings, or beyond the patterns papers write (``rules/multiplet.tsv``).

>>> from rdkit import Chem
>>> from rank.predict.perceive import perceive
>>> from rank.spectra import find_solvent
>>> perception = perceive(Chem.MolFromSmiles("CCOC(C)=O"))
>>> multiplets = MultipletPredictor(perception, find_solvent("CDCl3"), 400.0)
>>> multiplets.predict(0, [1.26, 4.09, 2.05]).multiplicity, multiplets.predict(1, [1.26, 4.09, 2.05]).j
('t', (7.0,))

References
----------
R. M. Silverstein, F. X. Webster, D. J. Kiemle, Spectrometric Identification of Organic Compounds,
7th ed., Wiley 2005, chapter 4 (first-order analysis).
E. Pretsch, P. Buehlmann, M. Badertscher, Structure Determination of Organic Compounds, 4th ed.,
Springer 2009, section 5.1. doi:10.1007/978-3-540-93810-1
"""

from __future__ import annotations

from functools import cache
from typing import TYPE_CHECKING, NamedTuple

from ..spectra import MULTIPLET_NAMES
from ..tables import read_table
from .perceive import SP3_FAMILIES, Perception

if TYPE_CHECKING:
    from collections.abc import Sequence

    from ..spectra import Solvent

__all__ = [
    "ALWAYS_BROAD", "Coupling", "CouplingKind", "Multiplet", "MultipletPredictor", "MultipletRules",
    "coupling_kinds", "multiplet_rules",
]

ALWAYS_BROAD = frozenset({"NH", "COOH"})
"""Exchangeable families predicted as a broad singlet whatever their couplings: NH (14N
quadrupole relaxation and exchange) and COOH (fast exchange) (common practice)."""

_COMPOUND_MAX = 3
"""Largest partner group written in a compound pattern (``dq``; papers do not write ``dquint``)."""


class Coupling(NamedTuple):
    """A coupling of one H of a signal to ``n_h`` H of another signal, with the typical J (Hz)."""

    signal: int
    n_h: int
    j: float
    kind: str


class CouplingKind(NamedTuple):
    """A row of ``rules/coupling.tsv``: the typical J (Hz) of a kind of coupling, its usual
    range ``low``-``high``, and in which solvents it is ``observed`` (``all``, ``no_exchange``,
    or a comma-separated list of solvents)."""

    kind: str
    j: float
    low: float
    high: float
    observed: str


class MultipletRules(NamedTuple):
    """The rows of ``rules/multiplet.tsv``, by id (their notes there say what each does)."""

    min_resolved_j: float
    merge_j: float
    first_order_ratio: float
    max_groups: int
    max_group_size: int
    ring_sp3_multiplet: bool
    ring_sp3_min_size: int
    ring_sp3_max_size: int


class Multiplet(NamedTuple):
    """The predicted pattern of one signal.

    Attributes
    ----------
    multiplicity : s, d, t, ..., dd, dt, ..., m or br s.
    j : J (Hz) of the resolved partner groups, largest first.
    broad : expected broad.
    couplings : every coupling seen in the solvent, including those too small to resolve.
    """

    multiplicity: str
    j: tuple[float, ...]
    broad: bool
    couplings: tuple[Coupling, ...]


@cache
def coupling_kinds() -> dict[str, CouplingKind]:
    """The rows of ``rules/coupling.tsv`` by kind, read once."""
    return {r["kind"]: CouplingKind(r["kind"], float(r["j"]), float(r["low"]), float(r["high"]), r["observed"])
            for r in read_table("coupling")}


@cache
def multiplet_rules() -> MultipletRules:
    """The values of ``rules/multiplet.tsv``, read once.

    Raises
    ------
    ValueError
        When the table lacks a row of :class:`MultipletRules` or has one it does not know.
    """
    values = {r["id"]: r["value"] for r in read_table("multiplet")}
    unknown = set(values) - set(MultipletRules._fields)
    missing = [name for name in MultipletRules._fields if name not in values]
    if unknown or missing:
        raise ValueError(f"rules/multiplet.tsv: rows missing {missing}, unknown {sorted(unknown)}")
    return MultipletRules(
        min_resolved_j=float(values["min_resolved_j"]),
        merge_j=float(values["merge_j"]),
        first_order_ratio=float(values["first_order_ratio"]),
        max_groups=int(values["max_groups"]),
        max_group_size=int(values["max_group_size"]),
        ring_sp3_multiplet=bool(int(values["ring_sp3_multiplet"])),
        ring_sp3_min_size=int(values["ring_sp3_min_size"]),
        ring_sp3_max_size=int(values["ring_sp3_max_size"]),
    )


def _partner_groups(resolved: list[Coupling], merge_j: float) -> list[tuple[float, int]]:
    """(J, number of partners) groups, largest J first; a coupling within ``merge_j`` Hz of the
    previous group's (weighted mean) J joins it."""
    groups: list[tuple[float, int]] = []
    for c in sorted(resolved, key=lambda c: -c.j):
        if groups and groups[-1][0] - c.j < merge_j:
            j, n = groups[-1]
            groups[-1] = ((j * n + c.j * c.n_h) / (n + c.n_h), n + c.n_h)
        else:
            groups.append((c.j, c.n_h))
    return groups


def _name(sizes: list[int], rules: MultipletRules) -> str:
    """The first-order pattern of partner groups of these sizes, or ``m``."""
    if len(sizes) > rules.max_groups:
        return "m"
    if len(sizes) == 1:
        return MULTIPLET_NAMES[sizes[0]] if sizes[0] <= rules.max_group_size else "m"
    if any(n > _COMPOUND_MAX for n in sizes):
        return "m"
    return "".join(MULTIPLET_NAMES[n] for n in sizes)


class MultipletPredictor:
    """The multiplicities of the proton classes of one molecule in one solvent at one field.

    Parameters
    ----------
    perception : Perception
        The molecule's proton classes (``rank.predict.perceive.perceive``).
    solvent : rank.spectra.Solvent
        Decides which couplings to exchangeable H are seen (``observed`` in ``coupling.tsv``).
    field_mhz : float
        1H frequency; partners closer than ``first_order_ratio`` × J in Hz give ``m``.
    """

    def __init__(self, perception: Perception, solvent: Solvent, field_mhz: float) -> None:
        self.perception = perception
        self.solvent = solvent
        self.field_mhz = field_mhz

    def predict(self, index: int, shifts: Sequence[float]) -> Multiplet:
        """The pattern of class ``index``, given the predicted shifts of all classes (ppm)."""
        proton_class = self.perception.classes[index]
        kinds, rules = coupling_kinds(), multiplet_rules()
        couplings = tuple(Coupling(p.cls, p.n_h, kinds[p.kind].j, p.kind)
                          for p in proton_class.partners if self._observed(p.kind))
        resolved = [c for c in couplings if c.j >= rules.min_resolved_j]
        if proton_class.exchangeable and (proton_class.family in ALWAYS_BROAD or not resolved):
            return Multiplet("br s", (), True, couplings)
        if not resolved:
            return Multiplet("s", (), False, couplings)
        groups = _partner_groups(resolved, rules.merge_j)
        js = tuple(round(j, 1) for j, _ in groups)
        if self._second_order(index, shifts, resolved, rules) or self._in_flexible_ring(index, resolved, rules):
            return Multiplet("m", js, False, couplings)
        return Multiplet(_name([n for _, n in groups], rules), js, False, couplings)

    def _observed(self, kind: str) -> bool:
        """Whether a coupling of ``kind`` is seen in the solvent."""
        rule = coupling_kinds()[kind].observed
        if rule == "all":
            return True
        if rule == "no_exchange":
            return not self.solvent.exchange
        return self.solvent.id in {s.strip() for s in rule.split(",")}

    def _second_order(self, index: int, shifts: Sequence[float], resolved: list[Coupling],
                      rules: MultipletRules) -> bool:
        """A resolved partner lies closer in Hz than ``first_order_ratio`` × J."""
        return any(abs(shifts[index] - shifts[c.signal]) * self.field_mhz < rules.first_order_ratio * c.j
                   for c in resolved)

    def _in_flexible_ring(self, index: int, resolved: list[Coupling], rules: MultipletRules) -> bool:
        """H on an sp3 carbon of a 5- to 8-membered ring, coupled to H on sp3 carbons of that ring:
        ring conformers average unequal couplings (``ring_sp3_*`` rows)."""
        drafts, graph = self.perception.drafts, self.perception.graph
        if not rules.ring_sp3_multiplet or drafts[index].family not in SP3_FAMILIES:
            return False
        atom = drafts[index].sites[0].atom
        ring = next((r for r in graph.rings
                     if atom in r and rules.ring_sp3_min_size <= len(r) <= rules.ring_sp3_max_size), None)
        return ring is not None and any(
            drafts[c.signal].family in SP3_FAMILIES and any(s.atom in ring for s in drafts[c.signal].sites)
            for c in resolved
        )
