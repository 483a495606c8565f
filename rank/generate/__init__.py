"""Generate: the candidate structures of a formula, streamed without repeats, narrowed by
patterns and by hints read from the spectrum (a hinted group is placed as one vertex).

The stream (``stream.py``) runs three parts: a planner of the compiled core's runs
(``plan.py``), the factory of the core's enumerators (``core.py``, over ``_enum.c``), and
the acceptor of each structure the core builds (``accept.py``).  Atom types and their
order are in ``atoms.py``, contracted groups in ``fragment.py``, the user's SMARTS in
``smarts.py``, hints in ``hints.py``, limits on atom counts (from a 13C list) in ``constraints.py``.

>>> sorted(s.smiles for s in IsomerStream("C2H6O", complete=True))
['CCO', 'COC']
"""

from .accept import Filter, Isomer, plausibility_filters
from .atoms import AtomState, AtomType, atom_states
from .constraints import Kind, Limit, carbon_limits, hint_limit, proton_limits
from .fragment import FragmentType
from .hints import Hint, read_hints
from .smarts import compile_smarts
from .stream import DEFAULT_CEILING, IsomerStream, Plan, SpaceTooLarge

__all__ = [
    "DEFAULT_CEILING", "AtomState", "AtomType", "Filter", "FragmentType", "Hint", "Isomer", "IsomerStream", "Kind",
    "Limit", "Plan", "SpaceTooLarge", "atom_states", "carbon_limits", "compile_smarts", "hint_limit",
    "plausibility_filters", "proton_limits", "read_hints",
]
