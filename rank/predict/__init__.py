"""Predict: a structure's proton classes (perception) and their 1H signals, each shift with its
arithmetic from the tables in ``rules/``; and its 13C signals (``carbon``).

``perceive`` finds the proton classes and their coupling partners, ``shifts`` computes each
class's shift, ``multiplets`` its first-order pattern, and ``proton`` puts them together as
one :class:`Signal` per class.  ``carbon`` predicts one :class:`CarbonSignal` per symmetry class
of carbon, with its DEPT type.

>>> [(s.shift, s.multiplicity) for s in predict_smiles("CCOC(C)=O")]
[(4.09, 'q'), (2.05, 's'), (1.26, 't')]
>>> [s.dept for s in predict_carbon_smiles("CCOC(C)=O")]
['C', 'CH2', 'CH3', 'CH3']
"""

from .carbon import CarbonPredictor, CarbonSignal, carbon_table, predict_carbon_smiles
from .proton import Coupling, Predictor, Signal, Term, parse_smiles, predict_smiles, signal_table

__all__ = ["CarbonPredictor", "CarbonSignal", "Coupling", "Predictor", "Signal", "Term", "carbon_table",
           "parse_smiles", "predict_carbon_smiles", "predict_smiles", "signal_table"]
