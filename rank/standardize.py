"""A user's structure brought to the form peakrank works on: one neutral, closed-shell
molecule of the elements the formula parser, the generator and the predictor know.

* A salt or mixture (SMILES with ``.``) becomes its largest organic component
  (RDKit's ``rdMolStandardize.LargestFragmentChooser``, organic fragments first).
* An ion whose net charge adding or removing H can cancel becomes that neutral form
  (``rdMolStandardize.Uncharger``): acetate is taken as acetic acid, a pyridinium
  as pyridine, since the increment tables are for neutral molecules.  Charges that
  balance inside the molecule (nitro groups, N-oxides, zwitterions) are kept as
  written: they are how chemists draw those molecules.  An onium ion with no H to
  move (tetramethylammonium, trimethylsulfonium) is kept as it is, and said so; its
  formula is an ion's, so it never matches a formula given to ``identify``.
* Other elements and unpaired electrons (radicals) are refused with
  :class:`Unsupported`: no table covers them, and a 1H spectrum of a radical is not
  what the predictor describes.

>>> s = standardize(Chem.MolFromSmiles("CC(=O)[O-].[Na+]"), "CC(=O)[O-].[Na+]")
>>> s.smiles, s.mixture, s.neutralised
('CC(=O)O', True, True)
"""

from __future__ import annotations

from typing import NamedTuple

from rdkit import Chem, rdBase
from rdkit.Chem.MolStandardize import rdMolStandardize

from .errors import InputError
from .formula import ELEMENTS

__all__ = ["SUPPORTED", "Standardized", "Unsupported", "quiet_rdkit", "standardize", "supported_text"]

SUPPORTED = ELEMENTS
"""The elements peakrank works on (``rules/valences.tsv`` and the formula parser)."""



def quiet_rdkit() -> rdBase.BlockLogs:
    """A context that keeps RDKit's log quiet while it lasts (``with quiet_rdkit(): ...``).

    For parsing what may not parse (a user's SMILES or SMARTS, whose error the caller reports on
    one line, or counts) and for sanitising generated structures, some of which RDKit refuses;
    outside such a block RDKit logs as the rest of the process has set it.
    """
    return rdBase.BlockLogs()


class Unsupported(InputError):
    """A structure peakrank cannot work on; ``kind`` is ``"elements"``, ``"radical"`` or ``"inorganic"``
    (a salt or mixture with no carbon)."""

    def __init__(self, kind: str, message: str, elements: tuple[str, ...] = ()) -> None:
        super().__init__(message)
        self.kind = kind
        self.elements = elements


class Standardized(NamedTuple):
    """The molecule to work on and what was changed to get it.

    ``mol``'s atoms are in the order of ``smiles`` when anything was changed, and in
    the input's order otherwise.
    """

    mol: Chem.Mol
    smiles: str
    mixture: bool
    neutralised: bool
    charge: int = 0

    def note(self, text: str) -> str | None:
        """What was changed or kept, in one line for the user; None when there is nothing to say."""
        if self.mixture and self.neutralised:
            return f"{text!r} is a salt or mixture; taking its largest organic component, neutral: {self.smiles!r}"
        if self.mixture:
            kept = f" (an ion of charge {self.charge:+d}: no H to move)" if self.charge else ""
            return f"{text!r} is a salt or mixture; taking its largest organic component {self.smiles!r}{kept}"
        if self.neutralised:
            return f"{text!r} is an ion; taking its neutral form {self.smiles!r}"
        if self.charge:
            return f"{text!r} is an ion of charge {self.charge:+d} with no H to move; taking it as written"
        return None


def standardize(mol: Chem.Mol, text: str) -> Standardized:
    """The largest organic component of ``mol``, neutralised where H can do it.

    Parameters
    ----------
    mol : a sanitised RDKit molecule.
    text : how the user wrote it, for messages.

    Raises
    ------
    Unsupported
        Elements other than :data:`SUPPORTED`, unpaired electrons, or a salt or
        mixture without carbon.
    """
    mixture = len(Chem.GetMolFrags(mol)) > 1
    if mixture:
        mol = rdMolStandardize.LargestFragmentChooser(preferOrganic=True).choose(mol)
    if mixture and not any(a.GetAtomicNum() == 6 for a in mol.GetAtoms()):
        raise Unsupported("inorganic", f"{text!r} has no organic component (no carbon); give the organic "
                          "compound's SMILES")
    label = f"the largest organic component {Chem.MolToSmiles(mol)!r} of {text!r}" if mixture else repr(text)
    foreign = sorted({a.GetSymbol() for a in mol.GetAtoms()} - set(SUPPORTED))
    if foreign:
        raise Unsupported("elements", f"{label} contains {', '.join(foreign)}; peakrank works on compounds of "
                          f"{supported_text()} only", tuple(foreign))
    radicals = [a for a in mol.GetAtoms() if a.GetNumRadicalElectrons()]
    if radicals:
        raise Unsupported("radical", f"{label} has unpaired electrons on {_where(radicals)} (a radical); "
                          f"write a closed-shell molecule, e.g. {_closed_shell(mol)!r}")
    neutralised = False
    if Chem.GetFormalCharge(mol):
        uncharged = rdMolStandardize.Uncharger().uncharge(mol)
        if not Chem.GetFormalCharge(uncharged):
            mol, neutralised = uncharged, True
    charge = Chem.GetFormalCharge(mol)
    if not (mixture or neutralised):
        return Standardized(mol, Chem.MolToSmiles(mol), False, False, charge)
    smiles = Chem.MolToSmiles(mol)
    return Standardized(Chem.MolFromSmiles(smiles), smiles, mixture, neutralised, charge)


def supported_text() -> str:
    """'C, H, N, O, S, P, F, Cl, Br and I'."""
    return f"{', '.join(SUPPORTED[:-1])} and {SUPPORTED[-1]}"


def _where(atoms: list[Chem.Atom]) -> str:
    return ", ".join(f"{a.GetSymbol()}{a.GetIdx() + 1}" for a in atoms[:3]) + (" ..." if len(atoms) > 3 else "")


def _closed_shell(mol: Chem.Mol) -> str:
    """The molecule with each unpaired electron paired with an H: ``[CH3]`` gives ``C``."""
    rw = Chem.RWMol(mol)
    for atom in rw.GetAtoms():
        if atom.GetNumRadicalElectrons():
            atom.SetNumExplicitHs(atom.GetTotalNumHs() + atom.GetNumRadicalElectrons())
            atom.SetNumRadicalElectrons(0)
    try:
        Chem.SanitizeMol(rw)
    except Chem.rdchem.MolSanitizeException:
        return "CC"
    return Chem.MolToSmiles(rw)
