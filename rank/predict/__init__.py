"""Predict: a structure's proton classes (perception) and their 1H signals, each shift with its
arithmetic from the tables in ``rules/``.

``perceive`` finds the proton classes and their coupling partners, ``shifts`` computes each
class's shift, ``multiplets`` its first-order pattern, and ``proton`` puts them together as
one :class:`Signal` per class.

>>> [(s.shift, s.multiplicity) for s in predict_smiles("CCOC(C)=O")]
[(4.09, 'q'), (2.05, 's'), (1.26, 't')]
"""

from .proton import Coupling, Predictor, Signal, Term, parse_smiles, predict_smiles, signal_table

__all__ = ["Coupling", "Predictor", "Signal", "Term", "parse_smiles", "predict_smiles", "signal_table"]
