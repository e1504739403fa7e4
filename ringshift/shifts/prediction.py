"""The prediction pipeline: Structure → circuits → currents → per-proton ring-current shifts.

One plain function, :func:`predict`, on frozen dataclasses. Geometric factors (ppm per nA/T) are
computed per conformer, circuit and proton by :func:`ringshift.fields.registry.geometric_factors`; shifts are
currents × factors, Boltzmann-averaged over conformers and then over each group of equivalent
protons. Reference shifts and the π-charge term are kept as separate columns, never folded into the
ring-current part.
"""

from __future__ import annotations

import re
import warnings
from collections.abc import Mapping, Sequence

import numpy as np
from rdkit import Chem

from ringshift import _validation as _v
from ringshift import fields, limits
from ringshift.constants import (
    BENZENE_CURRENT_NA_PER_T,
    BETA_MODELS,
    CURRENT_SOURCES,
    DEFAULT_MODEL,
    JB_SEPARATION_A,
    KEKULE_AVERAGE,
    MODELS,
)
from ringshift.errors import GeometryWarning, InputError
from ringshift.fields.registry import BAND_MODELS, MODEL_DESCRIPTIONS, geometric_factors
from ringshift.geometry.circuits import Circuit, CircuitGeometry, circuit_geometry, find_circuits
from ringshift.geometry.macrocycle import MACROCYCLE_RING
from ringshift.io.structures import Structure, isotope_note, proton_indices
from ringshift.pi.huckel import SCF_NO_SOLUTION_NOTE
from ringshift.pi.huckel import huckel as _pisystem_huckel
from ringshift.pi.london import (
    CLOSE_SOLUTIONS_NOTE,
    NON_PLANAR_NOTE,
    LondonCurrents,
    london_currents,
    pi_charge_shift_ppm,
)
from ringshift.pi.parameters import PI_CHARGE_PPM_PER_E
from ringshift.pi.perception import circuit_electrons, orbital_axes, perceive_pi
from ringshift.pi.perception import huckel_class as _pisystem_huckel_class
from ringshift.shifts.records import CircuitResult, GroupResult, Prediction, ProtonResult
from ringshift.shifts.reference import assemble_prediction, reference_shifts


def _weighted(values: np.ndarray, w: np.ndarray) -> np.ndarray:
    return np.tensordot(w, values, axes=(0, 0))


def benzene_equivalent_currents(mol: Chem.Mol, circuits: Sequence[Circuit]) -> list[tuple[float, str]]:
    """Benzene current (12 nA/T) for every circuit whose atoms RDKit flags aromatic, 0 otherwise."""
    out = []
    for c in circuits:
        arom = all(mol.GetAtomWithIdx(a).GetIsAromatic() for a in c.atoms)
        out.append((BENZENE_CURRENT_NA_PER_T if arom else 0.0,
                    "benzene-equivalent (RDKit aromatic)" if arom else "none (not aromatic by RDKit)"))
    return out


def _circuit_result(circ: Circuit, geo: CircuitGeometry, w: np.ndarray, current: float | None,
                    source: str, pi_electrons=None, huckel_class=None, note="") -> CircuitResult:
    # weighted mean normal keeps its orientation; renormalise
    normal = _weighted(geo.normal, w)
    nn = np.linalg.norm(normal)
    normal = normal / nn if nn > 1e-12 else geo.normal[0]
    rel = None if current is None else current / BENZENE_CURRENT_NA_PER_T
    centre = _weighted(geo.centre, w)
    return CircuitResult(
        circuit=circ, geometry=geo,
        centre=(float(centre[0]), float(centre[1]), float(centre[2])),
        normal=(float(normal[0]), float(normal[1]), float(normal[2])),
        radius_A=float(w @ geo.radius_A),
        planarity_rms_A=float(w @ geo.planarity_rms_A),
        max_misalignment_deg=float(w @ geo.max_misalignment_deg),
        planar=geo.planar_enough(w),
        current_nA_per_T=None if current is None else float(current),
        current_rel_benzene=None if rel is None else float(rel),
        current_source=source, pi_electrons=pi_electrons, huckel_class=huckel_class, note=note,
    )


def huckel_london_currents(structure: Structure, pi, loops: Sequence[Circuit], geoms: Sequence[CircuitGeometry],
                           beta_model: str, kekule_average_K: float | None = None):
    """Hückel–London current of every loop in every conformer.

    Returns
    -------
    currents : ndarray, shape (n_conf, n_loops)
        nA/T (ratio to benzene with the same parameters × 12 nA/T); 0 where no number exists.
    kekule_average_K : float, optional
        Average each conformer's currents over the zero-point and thermal motion of the Kekulé mode at this
        temperature (K; :mod:`ringshift.pi.kekule_mode`); None: the currents at the self-consistent minimum.
    status : list of str, length n_loops
        ``"ok"`` or the reason there is no number (open shell, ...).
    results : list of LondonCurrents, one per conformer
    """
    coords = structure.coords
    cur = np.zeros((coords.shape[0], len(loops)))
    status = ["ok"] * len(loops)
    results: list[LondonCurrents] = []
    if not loops:
        return cur, status, results
    for k in range(coords.shape[0]):
        normals = np.array([g.normal[k] for g in geoms])
        lc = london_currents(pi, structure.mol, coords[k], [c.atoms for c in loops], normals,
                             beta_model=beta_model, kekule_average_K=kekule_average_K)
        results.append(lc)
        if lc.status != "ok":
            status = [lc.status] * len(loops)
            continue
        cur[k] = np.asarray(lc.circuit_currents_nA_per_T, dtype=float)
    return cur, status, results


_CIRCUIT_REF = re.compile(r"circuits\[(\d+)\] \(\d+ atoms\)")


def london_notes(london: Sequence[LondonCurrents], already: Sequence[str], labels: Sequence[str],
                 best: int) -> list[str]:
    """The Hückel step's own warnings (non-convergence, close self-consistent solutions with both
    currents, near-degenerate levels) for the user, once each.

    The most populated conformer's messages are given in full with circuit labels (M1, ...); a message
    that appears only in other conformers is summarised once with the number of conformers. The
    non-planarity lines of :func:`london_currents` are left out: :func:`predict` states planarity per
    circuit with its label.
    """
    def clean(msg: str) -> str:
        return _CIRCUIT_REF.sub(lambda m: f"circuit {labels[int(m.group(1))]}" if int(m.group(1)) < len(labels)
                                else m.group(0), msg)

    def shown(msg: str) -> bool:
        return msg not in skip and NON_PLANAR_NOTE not in msg

    skip = set(already)
    out = [clean(msg) for msg in london[best].warnings if shown(msg)] if london else []
    others = [lc for k, lc in enumerate(london) if k != best]
    n_failed = sum(1 for lc in others if not lc.huckel.converged)
    n_close = sum(1 for lc in others if any(m.startswith(CLOSE_SOLUTIONS_NOTE) for m in lc.warnings))
    if n_failed:
        out.append(f"scf bond lengths found no stable solution in {n_failed} other conformer(s); the lowest-energy "
                   "point found is used there")
    if n_close:
        out.append(f"{n_close} other conformer(s) have two self-consistent bond-length solutions close in energy "
                   "with different currents")
    counts: dict[str, int] = {}
    for lc in others:
        for msg in dict.fromkeys(lc.warnings):
            if shown(msg) and not msg.startswith((SCF_NO_SOLUTION_NOTE, CLOSE_SOLUTIONS_NOTE)):
                counts[clean(msg)] = counts.get(clean(msg), 0) + 1
    out += [f"{msg} (in {n} other conformer(s))" for msg, n in counts.items() if msg not in out]
    return out


def predict(structure: Structure, *, model: str = DEFAULT_MODEL, currents: str = "huckel", beta_model: str = "scf",
            scale: Mapping[str, float] | None = None, set_current: Mapping[str, float] | None = None,
            user_circuits: Sequence[Sequence[int]] | None = None,
            separation_A: float = JB_SEPARATION_A, reference_table=None, width_A: float | None = None,
            height_width_A: float | None = None, kekule_average: bool = KEKULE_AVERAGE) -> Prediction:
    """Per-proton ring-current shifts of a structure.

    Parameters
    ----------
    structure : Structure
        From :func:`ringshift.io.structures.load_structure`.
    model : str
        Shielding model, one of :data:`MODELS`.
    currents : str
        Source of the a priori currents: ``"huckel"`` (Hückel–London current of each circuit,
        relative to benzene with the same parameters, × 12 nA/T; see :mod:`ringshift.pi.perception`) or
        ``"benzene"`` (12 nA/T on every circuit RDKit flags aromatic, 0 elsewhere).
    beta_model : str
        Resonance-integral model of the Hückel step: ``"scf"`` (self-consistent bond lengths),
        ``"distance"`` (β(r) from the geometry) or ``"uniform"``.
    scale : mapping label → factor, optional
        Multiplies a circuit's current (e.g. ``{"M1": 0.8}``).
    set_current : mapping label → nA/T, optional
        Sets a circuit's current outright (user-given; J > 0 diatropic).
    user_circuits : sequence of atom-index lists, optional
        Circuits given explicitly instead of the perceived faces.
    separation_A : float
        Half-separation of the two current lobes above and below the ring, Å (Johnson & Bovey, J. Chem. Phys.
        1958, 29, 1012: 0.64 Å).
    width_A, height_width_A : float, optional
        Finite width of the current (standard deviation in the ring plane and in height, Å) for the loop models
        ``polygon`` and ``johnson-bovey``; default 0 (thin wires). A fit to GIAO-HF π shieldings of benzene and
        [18]annulene gives separation 0.71 Å, width 0.18 Å, height width 0 (:data:`ringshift.constants.BAND_WIDTH_A`
        and neighbours; benchmarks/calibrate_near_wire.py), but on the published development set
        (benchmarks/accuracy) it changes the mean error by < 0.1 ppm, so it is offered, not the default.
        Ignored by the other models (their provenance records 0).
        Johnson–Bovey half-separation of the double loops, Å.
    reference_table : ringshift.shifts.reference.ReferenceTable, optional
        Ring-current-free reference shifts by proton class; the packaged table by default.
    kekule_average : bool
        With the self-consistent β models, average the Hückel–London currents over the zero-point and thermal
        motion of the Kekulé (bond-alternation) mode at the structure's temperature
        (:mod:`ringshift.pi.kekule_mode`); default :data:`ringshift.constants.KEKULE_AVERAGE`.

    Returns
    -------
    Prediction
    """
    _v.choice(model, MODELS, "model", "shielding model")
    _v.choice(currents, CURRENT_SOURCES, "currents", "current source")
    _v.choice(beta_model, BETA_MODELS, "beta_model", "beta model")
    mol = structure.mol
    coords = structure.coords
    w = np.asarray(structure.weights, dtype=float)
    notes: list[str] = []

    best = int(np.argmax(w))
    pi = perceive_pi(mol, coords[best])
    all_circuits = find_circuits(mol, pi.atoms, pi.bonds, user_circuits=user_circuits)
    loops = [c for c in all_circuits if c.carries_loop]
    perims = [c for c in all_circuits if not c.carries_loop]
    geoms = [circuit_geometry(coords, c, mol) for c in loops]
    pgeoms = [circuit_geometry(coords, c, mol) for c in perims]
    labels = [c.label for c in loops]
    for key in list((scale or {}).keys()) + list((set_current or {}).keys()):
        if key not in labels:
            raise InputError(f"no circuit labelled {key!r}; this molecule has {', '.join(labels) or 'none'}",
                             "set_current" if key in (set_current or {}) else "scale")
    notes.extend(pi.warnings)
    est = limits.estimate_predict(len(pi.atoms), len(pi.bonds), sum(a.GetAtomicNum() == 1 for a in mol.GetAtoms()),
                                  len(loops), coords.shape[0], huckel=currents == "huckel" and bool(loops))
    limits.check_estimate(est, "the prediction", structure.source)

    # currents: (n_conf, n_loops) nA/T
    cur = np.zeros((coords.shape[0], len(loops)))
    sources = []
    london = []
    hl_status = ["ok"] * len(loops)
    if currents == "huckel":
        pi_ok = all(a in pi.atoms for c in loops for a in c.atoms)
        if loops and not pi_ok:
            raise InputError("a given circuit contains atoms outside the pi system; Hueckel-London currents "
                             "need pi atoms (use the 'benzene' current source or give the current yourself)",
                             "user_circuits")
        kek_K = float(structure.provenance.get("temperature_K", 298.15)) if kekule_average else None
        with limits.progress("Hückel–London currents", est):
            cur, hl_status, london = huckel_london_currents(structure, pi, loops, geoms, beta_model, kek_K)
        sources = [f"huckel-london ({beta_model} beta)" if st == "ok" else "none: " + st for st in hl_status]
        for st in set(hl_status) - {"ok"}:
            notes.append(st)
        if any(st.startswith("open shell") for st in hl_status):
            # unpaired electrons shift ¹H signals by hyperfine (contact and pseudocontact) terms of tens of ppm and
            # broaden them (common practice, no source): the diamagnetic sum below is no prediction of the spectrum
            notes.append("open shell: the 'predicted' column is only the diamagnetic reference and charge terms; "
                         "the 1H spectrum of a species with unpaired electrons is dominated by paramagnetic "
                         "(hyperfine) shifts that this model does not contain, so do not compare it with a spectrum")
        notes.extend(london_notes(london, pi.warnings, labels, best))
    else:
        for c, (val, src) in enumerate(benzene_equivalent_currents(mol, loops)):
            cur[:, c] = val
            sources.append(src)
    for c, circ in enumerate(loops):
        if set_current and circ.label in set_current:
            cur[:, c] = set_current[circ.label]
            sources[c] = "user-given"
            hl_status[c] = "ok"
        if scale and circ.label in scale:
            cur[:, c] *= scale[circ.label]
            sources[c] += f" x {scale[circ.label]:g}"

    banded = model in BAND_MODELS
    width_A = _v.real(0.0 if width_A is None else width_A, "width_A", nonneg=True) if banded else 0.0
    height_width_A = (_v.real(0.0 if height_width_A is None else height_width_A, "height_width_A", nonneg=True)
                      if banded else 0.0)
    h_idx = proton_indices(mol)                    # ¹H only: ²H/³H are not protons of the spectrum
    if isotope_note(mol):
        notes.append(isotope_note(mol))
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", GeometryWarning)
        # per-circuit factors; the network model's total is replaced below, its breakdown uses the face loops
        g = geometric_factors(coords, h_idx, loops, geoms, "polygon" if model == "network" else model,
                              separation_A=separation_A, width_A=width_A, height_width_A=height_width_A)
    for wr in caught:
        notes.append(str(wr.message))
    per = g * cur[:, :, None]                      # (n_conf, n_loops, n_h)
    total = per.sum(axis=1)                        # (n_conf, n_h)
    if model == "network" and h_idx:
        if currents != "huckel" or not london or any(lc.status != "ok" for lc in london):
            raise InputError("the bond-current network model needs Hueckel-London bond currents "
                             "(the 'huckel' current source on a closed-shell pi system)", "model")
        if set_current or scale:
            notes.append("given or scaled currents change the per-circuit loops only; the network total uses the "
                         "Hueckel-London bond currents as computed")
        total = network_totals(structure, pi, london, h_idx, separation_A)
    mean_total = w @ total if h_idx else np.zeros(0)
    mean_per = _weighted(per, w) if h_idx else np.zeros((len(loops), 0))
    spread = np.sqrt(np.maximum(w @ (total - mean_total) ** 2, 0.0)) if h_idx else np.zeros(0)
    g_mean = _weighted(g, w) if h_idx else np.zeros((len(loops), 0))

    def _count(c):
        try:
            n = circuit_electrons(pi, c.atoms, mol)
        except InputError:
            return None, None
        return n, _pisystem_huckel_class(n)

    circuit_results = tuple(
        _circuit_result(c, geo, w, float(w @ cur[:, k]) if hl_status[k] == "ok" else None, sources[k],
                        *_count(c))
        for k, (c, geo) in enumerate(zip(loops, geoms))
    )
    for cr in circuit_results:
        if not cr.planar:
            notes.append(f"circuit {cr.circuit.label} is far from planar (RMS {cr.planarity_rms_A:.2f} A, "
                         f"p-orbital misalignment up to {cr.max_misalignment_deg:.0f} deg): overlap is not continuous")
            if cr.huckel_class == "4n" and currents == "huckel" and len(cr.circuit.atoms) >= MACROCYCLE_RING:
                # the paratropic current of a bond-alternated 4n circuit falls steeply with the twist of its single
                # bonds; MMFF94 twists the s-cis single bonds of [16]annulene to 56 deg where GFN2-xTB gives 37 deg
                # (Bannwarth, Ehlert & Grimme, J. Chem. Theory Comput. 2019, 15, 1652), and the current drops from
                # -0.25 to -0.04 x benzene (benchmarks/accuracy): a small current here is no proof of an atropic ring.
                # Macrocycles only (the conformer search's own size bound): the tub of cyclooctatetraene is its
                # real shape, not a partial twist
                notes.append(f"circuit {cr.circuit.label} has {cr.pi_electrons} pi electrons (4n) and is twisted: its "
                             "paratropic current falls steeply with the twist, which a force-field geometry can "
                             "overstate, so a small current is no proof of an atropic ring; compare with a "
                             "quantum-chemical geometry (--geometry gfn2-xtb) or fit the current to the spectrum")
    perimeter_results = tuple(_circuit_result(c, geo, w, None, "descriptive (no loop)", *_count(c))
                              for c, geo in zip(perims, pgeoms))
    if not loops:
        notes.append("no conjugated ring: all ring-current contributions are zero")
    if not h_idx and not isotope_note(mol):
        notes.append("the molecule has no hydrogens: nothing to predict")

    refs = (reference_shifts(mol, reference_table, h_idx, coords=structure.coords, weights=structure.weights)
            if h_idx else {})
    charge_ppm = charge_term_ppm(structure, pi, h_idx, beta_model,
                                 huckel_results=[lc.huckel for lc in london] or None)
    pos = {h: k for k, h in enumerate(h_idx)}
    group_of = {}
    for gi, grp in enumerate(structure.h_groups):
        for h in grp:
            group_of[h] = gi
    protons = []
    for h in h_idx:
        k = pos[h]
        ref = refs[h]
        pred_ppm = float(assemble_prediction([ref.ref_ppm], [mean_total[k]], [charge_ppm[k]])[0])
        parent = mol.GetAtomWithIdx(h).GetNeighbors()[0].GetIdx() if mol.GetAtomWithIdx(h).GetDegree() else -1
        protons.append(ProtonResult(
            index=h, parent=parent, group=group_of.get(h, -1),
            ring_current_ppm=float(mean_total[k]),
            per_circuit_ppm=tuple(float(x) for x in mean_per[:, k]),
            spread_ppm=float(spread[k]), charge_ppm=float(charge_ppm[k]),
            reference_ppm=ref.ref_ppm, reference_sd_ppm=ref.sd_ppm, proton_class=ref.proton_class,
            predicted_ppm=pred_ppm,
        ))
    groups = []
    for gi, grp in enumerate(structure.h_groups):
        ks = [pos[h] for h in grp]
        members = [protons[k] for k in ks]
        groups.append(GroupResult(
            group=gi, label=f"H{gi + 1}", atoms=tuple(grp), parents=tuple(p.parent for p in members),
            n_h=len(grp),
            ring_current_ppm=float(np.mean(mean_total[ks])),
            per_circuit_ppm=tuple(float(x) for x in mean_per[:, ks].mean(axis=1)),
            geometric_ppm_per_nA_T=tuple(float(x) for x in g_mean[:, ks].mean(axis=1)),
            spread_ppm=float(np.mean(spread[ks])), charge_ppm=float(np.mean([p.charge_ppm for p in members])),
            reference_ppm=float(np.mean([p.reference_ppm for p in members])),
            reference_sd_ppm=float(np.mean([p.reference_sd_ppm for p in members])),
            proton_class="/".join(sorted({refs[h].proton_class for h in grp})),  # the members' classes
            predicted_ppm=float(np.mean([p.predicted_ppm for p in members])),
        ))
    prov = {
        "model": model, "model_description": MODEL_DESCRIPTIONS[model],
        "separation_A": separation_A, "width_A": width_A, "height_width_A": height_width_A,
        "currents": currents, "beta_model": beta_model, "kekule_average": bool(kekule_average),
        "pi_charge_ppm_per_electron": PI_CHARGE_PPM_PER_E,
        "benzene_current_nA_per_T": BENZENE_CURRENT_NA_PER_T,
        "structure": dict(structure.provenance),
    }
    return Prediction(structure=structure, model=model, circuits=circuit_results,
                      perimeters=perimeter_results, protons=tuple(protons), groups=tuple(groups),
                      geometric=g, pi=pi, warnings=tuple(dict.fromkeys(notes)), provenance=prov,
                      huckel=london[best].huckel if len(london) > best else None)


def charge_term_ppm(structure: Structure, pi, h_idx: Sequence[int], beta_model: str, *,
                    huckel_results=None) -> np.ndarray:
    """π-charge shift of each proton, ppm: k · q of its parent π atom, for charged π systems only.

    The Hückel π charge q = Z − P of the parent atom (weighted over conformers) times
    k = 10.7 ppm/e (Schaefer & Schneider, Can. J. Chem. 1963, 41, 966; from memory). Applied only when
    the π system carries a net charge: in neutral heteroaromatics the charge effect of the heteroatom
    is already in the reference class (e.g. CH next to pyridine-type N), and would be counted twice.

    ``huckel_results`` (one :class:`ringshift.pi.huckel.HuckelResult` per conformer, e.g. those the
    Hückel–London step already computed with the same ``beta_model``) avoids solving the Hückel
    problem again.

    Returns
    -------
    ndarray, shape (n_h,)
    """
    out = np.zeros(len(h_idx))
    if not pi.atoms or pi.charge == 0 or not h_idx:
        return out
    mol = structure.mol
    w = np.asarray(structure.weights, dtype=float)
    q = np.zeros(len(pi.atoms))
    n_conf = structure.coords.shape[0]
    if huckel_results is None or len(huckel_results) != n_conf:
        huckel_results = [_pisystem_huckel(pi, mol, structure.coords[k], beta_model=beta_model)
                          for k in range(n_conf)]
    for k, hr in enumerate(huckel_results):
        q += w[k] * np.asarray(hr.charges, dtype=float)
    where = {a: i for i, a in enumerate(pi.atoms)}
    for n, h in enumerate(h_idx):
        nb = mol.GetAtomWithIdx(h).GetNeighbors()
        if nb and nb[0].GetIdx() in where:
            out[n] = float(pi_charge_shift_ppm([q[where[nb[0].GetIdx()]]])[0])
    return out


def network_totals(structure: Structure, pi, london, h_idx: Sequence[int], separation_A: float) -> np.ndarray:
    """Ring-current shift of each proton from the Hückel–London bond-current network.

    Every π bond carries its own current for fields along x, y and z, displaced ±separation along the
    local p-orbital axis (mean of its two atoms' axes); :func:`ringshift.fields.network.network_shielding`
    takes the isotropic average.

    Returns
    -------
    ndarray, shape (n_conf, n_h)
        Δδ_rc in ppm (positive = downfield).
    """
    mol = structure.mol
    coords = structure.coords
    bonds = list(pi.bonds)
    starts = [i for i, _ in bonds]
    ends = [j for _, j in bonds]
    atoms = list(pi.atoms)
    out = np.zeros((coords.shape[0], len(h_idx)))
    where = {a: i for i, a in enumerate(atoms)}
    for k, lc in enumerate(london):
        axes = orbital_axes(pi, mol, coords[k])
        ai = axes[[where[i] for i in starts]]
        aj = axes[[where[j] for j in ends]]
        aj = aj * np.sign(np.einsum("ij,ij->i", ai, aj))[:, None]
        nb = ai + aj
        nb /= np.linalg.norm(nb, axis=1, keepdims=True)
        sig = fields.network_shielding(coords[k, h_idx], coords[k, starts], coords[k, ends],
                                       np.asarray(lc.bond_currents_nA_per_T, dtype=float), nb,
                                       separation_A=separation_A)
        out[k] = -np.asarray(sig, dtype=float)
    return out
