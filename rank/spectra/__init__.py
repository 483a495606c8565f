"""Observe: read what the chemist has (1H and 13C peak text, tables, JCAMP-DX peak tables), drop
solvent signals, and turn integrals into H counts.

>>> spectrum = read_peaks("1H NMR (400 MHz, CDCl3) δ 4.12 (q, J = 7.1 Hz, 2H), 7.26 (s, CHCl3)")
>>> [p.shift for p in spectrum.peaks], spectrum.solvent
([4.12, 7.26], 'CDCl3')
"""

from .files import read_carbon_peaks, read_peak_source, read_peaks
from .integrals import Normalisation, exchangeable_bound, normalise, with_counts
from .peaks import (
    CARBON_SHIFT_RANGE,
    CARBON_TYPES,
    DEFAULT_FIELD_MHZ,
    MULTIPLET_NAMES,
    CarbonPeak,
    CarbonSpectrum,
    Dropped,
    Peak,
    PeakSource,
    Spectrum,
    coupling_groups,
    format_carbon_peaks,
    format_peaks,
    normalise_multiplicity,
    observation_rule,
)
from .solvents import (
    DEFAULT_SOLVENT,
    Solvent,
    drop_carbon_solvent_signals,
    drop_labelled_peaks,
    drop_solvent_signals,
    find_solvent,
    solvent_names,
)
from .text import parse_carbon_text, parse_peak_text
from .trace import Trace, read_trace

__all__ = [
    "CARBON_SHIFT_RANGE",
    "CARBON_TYPES",
    "DEFAULT_FIELD_MHZ",
    "DEFAULT_SOLVENT",
    "MULTIPLET_NAMES",
    "CarbonPeak",
    "CarbonSpectrum",
    "Dropped",
    "Normalisation",
    "Peak",
    "PeakSource",
    "Solvent",
    "Spectrum",
    "Trace",
    "coupling_groups",
    "drop_carbon_solvent_signals",
    "drop_labelled_peaks",
    "drop_solvent_signals",
    "exchangeable_bound",
    "find_solvent",
    "format_carbon_peaks",
    "format_peaks",
    "normalise",
    "normalise_multiplicity",
    "observation_rule",
    "parse_carbon_text",
    "parse_peak_text",
    "read_carbon_peaks",
    "read_peak_source",
    "read_peaks",
    "read_trace",
    "solvent_names",
    "with_counts",
]
