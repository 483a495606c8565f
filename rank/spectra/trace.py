"""Spectrum traces: a processed 1D spectrum as intensities on a shift axis, read from instrument files."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True, eq=False)
class Trace:
    """A processed (frequency-domain, real) 1D spectrum.

    Attributes
    ----------
    ppm : shift of each point in ppm, as the file states its axis (before any re-referencing);
        monotonic, either direction.
    intensity : real intensities, same length as ``ppm``.
    nucleus : "1H" or "13C" (or another nucleus, as written: "19F", "31P").
    frequency_mhz : the observe frequency of that nucleus, MHz.
    solvent : the solvent id of :func:`rank.spectra.find_solvent` when the file names a known one, else None.
    experiment : the pulse program or experiment as the file names it (``zg30``, ``dept135``), lower case; "".
    source : where it came from, for messages (a file or folder name).
    """

    ppm: np.ndarray
    intensity: np.ndarray
    nucleus: str
    frequency_mhz: float
    solvent: str | None = None
    experiment: str = ""
    source: str = ""

    @property
    def is_dept135(self) -> bool:
        """A DEPT-135 spectrum: CH and CH3 up, CH2 down, quaternary carbons absent."""
        return "dept135" in self.experiment.replace("-", "").replace(" ", "")
