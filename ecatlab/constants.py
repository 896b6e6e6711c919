"""Physical constants used by ecatlab, all derived from :mod:`scipy.constants`.

The CODATA adjustment is the one the installed scipy provides (:data:`CODATA_VERSION`; CODATA
2022 for scipy >= 1.15).

No other module of ecatlab writes a literal physical constant: they import from here.
Energies in ecatlab are in eV, potentials in V, temperatures in K, pressures in bar unless a
name says otherwise.
"""

from __future__ import annotations

import math

from scipy import constants as _sc

try:  # the adjustment scipy.constants uses; private in scipy, so read defensively
    from scipy.constants._codata import _current_codata as CODATA_VERSION
except ImportError:  # pragma: no cover
    CODATA_VERSION = "CODATA (version not reported by scipy)"

#: Boltzmann constant in eV/K.
BOLTZMANN_EV: float = _sc.k / _sc.e
#: Elementary charge in C.
ELEMENTARY_CHARGE: float = _sc.e
#: Avogadro constant in 1/mol.
AVOGADRO: float = _sc.N_A
#: Faraday constant in C/mol.
FARADAY: float = _sc.N_A * _sc.e
#: Planck constant in eV s.
PLANCK_EV: float = _sc.h / _sc.e
#: Speed of light in cm/s (for wavenumbers).
SPEED_OF_LIGHT_CM: float = _sc.c * 100.0
#: Molar gas constant in J/(mol K).
GAS_CONSTANT: float = _sc.R
#: One kJ/mol expressed in eV per particle.
KJ_PER_MOL_IN_EV: float = 1000.0 / (_sc.N_A * _sc.e)
#: One eV per particle expressed in kJ/mol.
EV_IN_KJ_PER_MOL: float = 1.0 / KJ_PER_MOL_IN_EV
#: One wavenumber (1 cm^-1) expressed in eV: h c / (1 cm).
WAVENUMBER_IN_EV: float = PLANCK_EV * SPEED_OF_LIGHT_CM
#: One meV in eV.
MEV_IN_EV: float = 1.0e-3
#: One bar in Pa.
BAR_IN_PA: float = _sc.bar
#: Standard state pressure (1 bar) in Pa.
STANDARD_PRESSURE_PA: float = _sc.bar
#: Standard temperature for tabulated thermochemistry, K.
STANDARD_TEMPERATURE: float = 298.15
#: ln(10), for the proton activity term.
LN10: float = math.log(10.0)


def thermal_voltage_per_pH(temperature: float = STANDARD_TEMPERATURE):
    """Nernstian shift per pH unit, k_B T ln(10) / e.

    Parameters
    ----------
    temperature : float or array_like
        Absolute temperature in K.

    Returns
    -------
    float or ndarray
        The shift in V per pH unit (numerically equal to eV per proton).
        0.05916 V at 298.15 K. Never hard-coded: computed from k_B and T.
    """
    import numpy as np

    t = np.asarray(temperature, dtype=float)
    if np.any(~np.isfinite(t)) or np.any(t <= 0):
        from ecatlab.errors import ConditionError

        raise ConditionError(f"temperature must be a positive number of kelvin, got {temperature!r}")
    value = BOLTZMANN_EV * t * LN10
    return float(value) if value.ndim == 0 else value

# --- added for the thermochemistry module (harmonic and ideal-gas models) ---------------------
#: Boltzmann constant in J/K.
BOLTZMANN_J: float = _sc.k
#: Planck constant in J s.
PLANCK_J: float = _sc.h
#: Atomic mass unit (dalton) in kg.
ATOMIC_MASS_KG: float = _sc.atomic_mass
#: One angstrom in m.
ANGSTROM_M: float = _sc.angstrom
#: One THz (frequency) expressed as an energy h * 1e12 Hz, in eV.
TERAHERTZ_IN_EV: float = PLANCK_EV * 1.0e12
#: Entropy conversion: one eV/K per particle in J/(mol K).
EV_PER_K_IN_J_PER_MOL_K: float = _sc.e * _sc.N_A
