"""Hückel parameters: heteroatoms, the β(r) law and the bond-order/bond-length lines, each with its source.

``HETERO_PARAMETERS`` maps an atom type to (h_X, k_CX, source), α_X = α + h_X β, β_CX = k_CX β. N and O
(and halogens) come from Derflinger & Lischka, Monatsh. Chem. 1969, 100, 1003 (values read from a
secondary reproduction of their table, not from the original paper): pyridine-type N h 0.83 / k 1.06,
pyrrole-type N 1.47 / 1.30, furan-type O 2.06 / 1.31, carbonyl O 1.18 / 1.93, F 2.84 / 0.68, Cl 1.45 /
0.57, Br 1.16 / 0.38, I 0.78 / 0.19. Cationic N⁺ (pyridinium, 2.0 / 1.0), O⁺ (pyrylium, 2.5 / 1.0) and B
(−1.0 / 0.7) come from Streitwieser, *Molecular Orbital Theory for Organic Chemists*, Wiley 1961, p. 135
(from memory). Thiophene-type S (1.11 / 0.69) from Van-Catledge, J. Org. Chem. 1980, 45, 4801 (from
memory). Anions (pyrrolide N⁻, phenolate O⁻) and thione S use the parameters of the atom with the same
core (stated approximation, no source). A bond between two heteroatoms gets k = sqrt(k_CX k_CY) (common
practice, no source).

β(r) = β0 exp(−(r − 1.397 Å)/0.3106 Å) (Longuet-Higgins & Salem, Proc. R. Soc. A 1959, 251, 172, from
memory); the bond-order/bond-length lines are described in :mod:`ringshift.pi.huckel`.
"""

from __future__ import annotations

import numpy as np

__all__ = ['HETERO_PARAMETERS', 'BETA_REF_LENGTH_A', 'BETA_DECAY_A', 'COULSON_R0_A', 'COULSON_SLOPE_A', 'BETA0_EV',
           'POLYACETYLENE_BLA_A', 'PI_CHARGE_PPM_PER_E', 'SCF_CLOSE_KCAL_PER_MOL', 'SCF_CURRENT_DIFF_REL']


_DL = "Derflinger & Lischka, Monatsh. Chem. 1969, 100, 1003"

_ST = "Streitwieser, Molecular Orbital Theory for Organic Chemists, Wiley 1961, p. 135 (from memory)"

_VC = "Van-Catledge, J. Org. Chem. 1980, 45, 4801 (from memory)"

#: atom type -> (h_X, k_CX, source). Carbon of any charge is the reference (h 0, k 1).
HETERO_PARAMETERS: dict[str, tuple[float, float, str]] = {
    "C": (0.0, 1.0, "reference"), "C+": (0.0, 1.0, "reference"),
    "C-": (0.0, 1.0, "reference"), "C.": (0.0, 1.0, "reference"),
    "N_pyridine": (0.83, 1.06, _DL), "N_nitrile": (0.83, 1.06, _DL + " (pyridine-type N)"),
    "N-": (0.83, 1.06, _DL + " (pyridine-type core; approximation)"),
    "N_pyrrole": (1.47, 1.30, _DL), "N+_pyridinium": (2.0, 1.0, _ST),
    "O_furan": (2.06, 1.31, _DL), "O_carbonyl": (1.18, 1.93, _DL),
    "O-": (1.18, 1.93, _DL + " (carbonyl-type core; approximation)"), "O+_pyrylium": (2.5, 1.0, _ST),
    "S_thiophene": (1.11, 0.69, _VC), "S_thione": (1.11, 0.69, _VC + " (thiophene-type S; approximation)"),
    "B": (-1.0, 0.7, _ST), "F": (2.84, 0.68, _DL), "Cl": (1.45, 0.57, _DL), "Br": (1.16, 0.38, _DL),
    "I": (0.78, 0.19, _DL),
}

#: Reference C–C length of β0 (benzene), Å.
BETA_REF_LENGTH_A = 1.397

#: Decay length of β(r) = β0 exp(−(r − 1.397)/0.3106), Å (Longuet-Higgins & Salem 1959, from memory).
BETA_DECAY_A = 0.3106

#: Linear bond-order/bond-length relation r = R0 − SLOPE·p (Coulson 1939, linearised; from memory):
#: the ``"scf-coulson"`` model.
COULSON_R0_A = 1.520

COULSON_SLOPE_A = 0.186

#: Bond-length alternation of trans-polyacetylene, Å (1.36 / 1.44 Å; Yannoni & Clarke, Phys. Rev.
#: Lett. 1983, 51, 1191, from memory): the calibration target of the ``"scf"`` model.
POLYACETYLENE_BLA_A = 0.08

#: Absolute β0 at 1.397 Å, eV: the graphene nearest-neighbour hopping t ≈ 2.8 eV at 1.42 Å
#: (Castro Neto et al., Rev. Mod. Phys. 2009, 81, 109; from memory), carried to 1.397 Å by β(r).
BETA0_EV = -2.8 * float(np.exp((1.42 - BETA_REF_LENGTH_A) / BETA_DECAY_A))

#: Shift per π charge: Δδ = k·q, q = Z − P (q > 0 electron-poor, downfield); 10.7 ppm/e
#: (Schaefer & Schneider, Can. J. Chem. 1963, 41, 966; from memory).
PI_CHARGE_PPM_PER_E = 10.7

#: Levels closer than this (units of |β|) count as degenerate.
DEGENERACY_TOL = 1e-6

#: Two self-consistent bond-length solutions closer than this in model energy (kcal/mol) are reported with
#: both currents: RT at 298.15 K = 0.592 kcal/mol (CODATA R), the energy below which both would be populated
#: at room temperature (Boltzmann ratio above 1/e). The model's own energy error is larger, so the rule says
#: "undecided", never "both present".
SCF_CLOSE_KCAL_PER_MOL = 0.592

#: ... unless their currents agree within this on every circuit (units of the benzene current, 0.24 nA/T):
#: below the two decimals of the printed ratio (e.g. the two Kekulé phases of a symmetric ring).
SCF_CURRENT_DIFF_REL = 0.02
