r"""Energy levels with degeneracies: exact statistical mechanics of small systems.

``N`` particles on single-particle levels (energy ``ε_i``, degeneracy ``g_i``)
under the MB, BE (optionally with a capacity per state: Gentile's
intermediate statistics) or FD rule.  The package has six rooms, and this
module gives their public names in one place (as :mod:`networkx.algorithms`
gathers its topic modules):

:mod:`~enumerator.algorithms.levels.spectra`
    exact energies from user values, spectra, presets (harmonic oscillator,
    isotropic trap, two-level system, Einstein solid) and systems;
:mod:`~enumerator.algorithms.levels.multiplicities`
    exact multiplicities ``Ω(N, E)`` -- the coefficients of the canonical
    partition function ``Z_N(t)`` -- by FLINT polynomial arithmetic and the
    particle-number recursion (Newton's identities), the exact energy
    split of two systems in thermal contact and the microcanonical
    temperature;
:mod:`~enumerator.algorithms.levels.ensembles`
    the canonical ensemble from the Borrmann–Franke recursion (P. Borrmann
    and G. Franke, J. Chem. Phys. 98, 2484 (1993)) and the grand-canonical
    occupation formulas;
:mod:`~enumerator.algorithms.levels.bosons_float`
    canonical bosons at scale: the same recursion in double precision with
    rigorous a-posteriori error bounds;
:mod:`~enumerator.algorithms.levels.occupation`
    the canonical law ``P(n_l = k)`` of one level's occupation, to a
    requested precision or exact at a rational Boltzmann factor;
:mod:`~enumerator.algorithms.levels.particle_hole`
    canonical fermions by the particle-hole expansion about the ground state.

Units: energies and temperatures share the user's energy unit, with
Boltzmann's constant ``k_B = 1``.

>>> multiplicities(einstein_solid(3), 4)
{0: 1, 1: 3, 2: 6, 3: 10, 4: 15}
"""

from __future__ import annotations

from .ensembles import (
    DEFAULT_DIGITS,
    ROUTES,
    CanonicalPoint,
    canonical,
    canonical_occupations,
    grand_canonical,
    grand_canonical_level_variance,
    parse_temperatures,
)
from .multiplicities import (
    MAX_CELLS,
    Contact,
    ContactSummary,
    MicroPoint,
    microcanonical,
    multiplicities,
    multiplicity_cost,
    multiplicity_table,
    thermal_contact,
)
from .occupation import OccupationLaw, factor_temperature, occupation_law, occupation_law_exact, parse_factor
from .spectra import (
    PRESETS,
    Ladder,
    Spectrum,
    System,
    einstein_solid,
    ground_energy,
    harmonic_oscillator,
    harmonic_trap,
    make_spectrum,
    make_system,
    parse_digits,
    parse_rational,
    two_level,
)

__all__ = [
    "CanonicalPoint",
    "Contact",
    "ContactSummary",
    "DEFAULT_DIGITS",
    "Ladder",
    "MAX_CELLS",
    "MicroPoint",
    "PRESETS",
    "Spectrum",
    "System",
    "canonical",
    "canonical_occupations",
    "einstein_solid",
    "grand_canonical",
    "grand_canonical_level_variance",
    "factor_temperature",
    "ROUTES",
    "parse_temperatures",
    "ground_energy",
    "harmonic_oscillator",
    "harmonic_trap",
    "make_spectrum",
    "make_system",
    "microcanonical",
    "multiplicities",
    "multiplicity_cost",
    "multiplicity_table",
    "occupation_law",
    "occupation_law_exact",
    "OccupationLaw",
    "parse_factor",
    "parse_digits",
    "parse_rational",
    "thermal_contact",
    "two_level",
]
