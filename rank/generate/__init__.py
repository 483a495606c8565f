"""Generate: the candidate structures of a formula, streamed without repeats, narrowed by
patterns and by hints read from the spectrum (a hinted group is placed as one vertex).

>>> sorted(s.smiles for s in IsomerStream("C2H6O", complete=True))
['CCO', 'COC']
"""

from .hints import Hint, read_hints
from .stream import (
    DEFAULT_CEILING,
    AtomState,
    AtomType,
    Filter,
    Isomer,
    IsomerStream,
    SpaceTooLarge,
    atom_states,
    compile_smarts,
    plausibility_filters,
)

__all__ = [
    "DEFAULT_CEILING", "AtomState", "AtomType", "Filter", "Hint", "Isomer", "IsomerStream", "SpaceTooLarge",
    "atom_states", "compile_smarts", "plausibility_filters", "read_hints",
]
