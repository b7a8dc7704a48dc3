"""Generate testdata/psi4/df_energies.json: density-fitted (scf_type df)
RHF/UHF/ROHF/RKS/UKS energies from psi4 with the auxiliary (JKFIT) set named
explicitly for every case, the exact (scf_type pk) energy of the same case,
and a few three-centre and two-centre integrals of water for the integral
check.

Run: cd testdata/psi4 && /usr/bin/python3 gen_df.py          # cases
     cd testdata/psi4 && /usr/bin/python3 gen_df.py timing   # adds timings

Auxiliary sets: psi4 1.3.2 reads the same Basis Set Exchange data as
moltrail's library (engine/basis/data/*.json). Its file for the universal
def2 JKFIT set is def2-qzvpp-jkfit.gbs (the set is the same for every def2
orbital basis); for each case this script checks, element by element, that
psi4's auxiliary file and moltrail's JSON hold the same exponents and
coefficients (aux_set_identical_to in each case).

psi4 builds the auxiliary basis with the orbital basis's puream (spherical
or Cartesian functions), which each case records (aux_puream).
"""
import json
import math
import os
import re
import sys

from common import (HERE, TIMING_NOTE, timed, timing_summary, SCF_COMMON, SCF_COMMON_DOC, arr, geometry_bohr,
                    header, make_molecule, psi4, reset, spin_squared, write_json, np)
from gen_dft import FINE_GRID, FUNCTIONAL_DEFS, func_arg

LIB = os.path.join(HERE, "..", "..", "engine", "basis", "data")

# moltrail library file -> psi4 basis name for the same auxiliary set
AUX_PSI4 = {
    "cc-pvdz-jkfit": "cc-pvdz-jkfit",
    "cc-pvtz-jkfit": "cc-pvtz-jkfit",
    "aug-cc-pvdz-jkfit": "aug-cc-pvdz-jkfit",
    "aug-cc-pvtz-jkfit": "aug-cc-pvtz-jkfit",
    "def2-universal-jkfit": "def2-qzvpp-jkfit",
}

# name, geometry key, charge, mult, basis, puream, reference, aux (moltrail file stem), functional key or None
CASES = [
    ("h2o_rhf_ccpvdz", "h2o", 0, 1, "cc-pvdz", True, "rhf", "cc-pvdz-jkfit", None),
    ("h2o_rhf_631gs", "h2o", 0, 1, "6-31g*", False, "rhf", "def2-universal-jkfit", None),
    ("hf_rhf_ccpvtz", "hf", 0, 1, "cc-pvtz", True, "rhf", "cc-pvtz-jkfit", None),
    ("h2s_rhf_ccpvdz", "h2s", 0, 1, "cc-pvdz", True, "rhf", "cc-pvdz-jkfit", None),
    ("hcl_rhf_def2tzvp", "hcl", 0, 1, "def2-tzvp", True, "rhf", "def2-universal-jkfit", None),
    ("co_rhf_augccpvdz", "co", 0, 1, "aug-cc-pvdz", True, "rhf", "aug-cc-pvdz-jkfit", None),
    ("oh_uhf_ccpvdz", "oh", 0, 2, "cc-pvdz", True, "uhf", "cc-pvdz-jkfit", None),
    ("oh_rohf_ccpvdz", "oh", 0, 2, "cc-pvdz", True, "rohf", "cc-pvdz-jkfit", None),
    ("o2_triplet_uhf_631g", "o2", 0, 3, "6-31g", False, "uhf", "def2-universal-jkfit", None),
    ("benzene_rhf_ccpvdz", "benzene", 0, 1, "cc-pvdz", True, "rhf", "cc-pvdz-jkfit", None),
    ("h2o_rks_b3lyp_ccpvdz", "h2o", 0, 1, "cc-pvdz", True, "rks", "cc-pvdz-jkfit", "b3lyp"),
    ("nh3_rks_pbe_631gs", "nh3", 0, 1, "6-31g*", False, "rks", "def2-universal-jkfit", "pbe"),
    ("co_rks_pbe_ccpvtz", "co", 0, 1, "cc-pvtz", True, "rks", "cc-pvtz-jkfit", "pbe"),
    ("oh_uks_b3lyp_ccpvdz", "oh", 0, 2, "cc-pvdz", True, "uks", "cc-pvdz-jkfit", "b3lyp"),
]

DF_SETTINGS = {
    "scf_type": "df",
    "df_fitting_condition": 1e-10,
}

DF_DOC = {
    "scf_type": "df (psi4 1.3.2 picks its in-memory MemDFJK: Coulomb-metric fitting of J and K)",
    "df_basis_scf": "named explicitly per case (aux_basis_psi4)",
    "df_fitting_condition": "1e-10 (psi4's relative eigenvalue cut-off of the metric inversion, set explicitly at its default)",
    "ints_tolerance": "0.0 (SCF_COMMON): no Schwarz screening of the three-centre integrals",
    "df_scf_guess": "psi4 default; the converged energy does not depend on it",
}


def parse_gbs(path):
    """psi4 .gbs -> {element: [(l, [exps], [coefs])]} (spherical/cartesian header ignored)."""
    lmap = {"S": 0, "P": 1, "D": 2, "F": 3, "G": 4, "H": 5, "I": 6}
    out = {}
    lines = [ln.strip() for ln in open(path)]
    i = 0
    while i < len(lines):
        m = re.match(r"^([A-Z][a-z]?)\s+0$", lines[i])
        if not m:
            i += 1
            continue
        el = m.group(1)
        i += 1
        shells = []
        while lines[i] != "****":
            parts = lines[i].split()
            l, nprim = lmap[parts[0].upper()], int(parts[1])
            exps, coefs = [], []
            for k in range(nprim):
                e, c = lines[i + 1 + k].replace("D", "E").split()[:2]
                exps.append(float(e))
                coefs.append(float(c))
            shells.append((l, exps, coefs))
            i += 1 + nprim
        out[el] = shells
        i += 1
    return out


def check_same_aux(stem, elements):
    ours = json.load(open(os.path.join(LIB, stem + ".json")))["elements"]
    theirs = parse_gbs("/usr/share/psi4/basis/%s.gbs" % AUX_PSI4[stem])
    for el in sorted(set(elements)):
        a, b = ours[el], theirs[el]
        assert len(a) == len(b), (stem, el, len(a), len(b))
        for sa, (l, exps, coefs) in zip(a, b):
            assert sa["l"] == l, (stem, el)
            assert len(sa["exponents"]) == len(exps), (stem, el)
            for x, y in zip(sa["exponents"] + sa["coefficients"], exps + coefs):
                assert abs(x - y) <= 1e-12 * max(1.0, abs(y)), (stem, el, x, y)
    return "psi4 %s.gbs equals moltrail engine/basis/data/%s.json for %s (exponents and coefficients)" % (
        AUX_PSI4[stem], stem, ", ".join(sorted(set(elements))))


def energy(geom, charge, mult, basis, puream, ref, fkey, tag, extra):
    reset("gen_df_%s.out" % tag)
    mol = make_molecule(geom, charge, mult, tag)
    opts = dict(SCF_COMMON)
    if fkey:
        opts.update(FINE_GRID)
    opts.update({"basis": basis, "puream": puream, "reference": ref})
    opts.update(extra)
    psi4.set_options(opts)
    if fkey is None:
        e, wfn = psi4.energy("scf", molecule=mol, return_wfn=True)
    else:
        fa = func_arg(fkey)
        if "name" in fa:
            e, wfn = psi4.energy(fa["name"], molecule=mol, return_wfn=True)
        else:
            e, wfn = psi4.energy("scf", dft_functional=fa["dft_functional"], molecule=mol, return_wfn=True)
    return float(e), wfn


def run_case(name, gkey, charge, mult, basis, puream, ref, aux, fkey):
    geom = geometry_bohr(gkey)
    extra = dict(DF_SETTINGS)
    extra["df_basis_scf"] = AUX_PSI4[aux]
    e_df, wfn = energy(geom, charge, mult, basis, puream, ref, fkey, name, extra)
    auxbs = wfn.get_basisset("DF_BASIS_SCF")
    out = {
        "name": name,
        "geometry_bohr": geom,
        "charge": charge,
        "multiplicity": mult,
        "basis": basis,
        "puream": puream,
        "reference": ref,
        "functional": fkey,
        "aux_basis": aux,
        "aux_basis_psi4": AUX_PSI4[aux],
        "aux_set_identical_to": check_same_aux(aux, [a[0] for a in geom]),
        "aux_puream": bool(auxbs.has_puream()),
        "n_basis_functions": wfn.basisset().nbf(),
        "n_aux_functions": auxbs.nbf(),
        "energy_total_hartree": e_df,
        "scf_iterations": int(psi4.variable("SCF ITERATIONS")),
    }
    if fkey:
        out["functional_definition"] = FUNCTIONAL_DEFS[fkey]
    if ref in ("uhf", "uks"):
        out["s_squared"] = spin_squared(wfn)
    e_ex, _ = energy(geom, charge, mult, basis, puream, ref, fkey, name + "_exact", {})
    out["energy_total_exact_hartree"] = e_ex
    out["fitting_error_hartree"] = e_df - e_ex
    out["fitting_error_per_atom_hartree"] = (e_df - e_ex) / len(geom)
    print("%-24s DF %.12f  exact %.12f  diff/atom %+.2e  naux %d" % (name, e_df, e_ex, out["fitting_error_per_atom_hartree"], auxbs.nbf()), flush=True)
    return out


def water_integrals():
    """Selected (mn|P) and (P|Q) of water, cc-pVDZ / cc-pVDZ-JKFIT, spherical."""
    geom = geometry_bohr("h2o")
    reset("gen_df_integrals.out")
    mol = make_molecule(geom, 0, 1, "h2o")
    psi4.set_options({"basis": "cc-pvdz", "puream": True, "df_basis_scf": "cc-pvdz-jkfit"})
    bs = psi4.core.BasisSet.build(mol, "ORBITAL", "cc-pvdz")
    aux = psi4.core.BasisSet.build(mol, "DF_BASIS_SCF", "cc-pvdz-jkfit", "JKFIT", "cc-pvdz", puream=True)
    zero = psi4.core.BasisSet.zero_ao_basis_set()
    mints = psi4.core.MintsHelper(bs)
    three = np.asarray(mints.ao_eri(zero, aux, bs, bs)).reshape(aux.nbf(), bs.nbf(), bs.nbf())
    metric = np.asarray(mints.ao_eri(zero, aux, zero, aux)).reshape(aux.nbf(), aux.nbf())
    picks3 = [(0, 0, 0), (5, 1, 0), (20, 3, 4), (40, 7, 2), (60, 10, 11), (75, 12, 23), (100, 2, 9), (115, 23, 22),
              (33, 8, 8), (47, 5, 14)]
    picks2 = [(0, 0), (1, 0), (20, 3), (40, 41), (60, 75), (100, 115), (115, 115), (33, 90)]
    def shells(b):
        out = []
        for s in range(b.nshell()):
            sh = b.shell(s)
            out.append({"atom_index": sh.ncenter, "l": sh.am, "first_function_index": b.shell_to_basis_function(s),
                        "exponents": [sh.exp(k) for k in range(sh.nprimitive)]})
        return out
    return {
        "what": "psi4 MintsHelper.ao_eri(zero, aux, orb, orb) = (P|mn) and ao_eri(zero, aux, zero, aux) = (P|Q), "
                "water cc-pVDZ with cc-pVDZ-JKFIT, both spherical; function order as psi4 (its spherical order "
                "m = 0, +1, -1, +2, -2, ... for l >= 2; Cartesian x, y, z for p)",
        "geometry_bohr": geom,
        "n_basis_functions": bs.nbf(),
        "n_aux_functions": aux.nbf(),
        "shells": shells(bs),
        "aux_shells": shells(aux),
        "three_centre": [{"P": p, "m": m, "n": n, "value": float(three[p, m, n])} for p, m, n in picks3],
        "two_centre": [{"P": p, "Q": q, "value": float(metric[p, q])} for p, q in picks2],
        "metric_trace": float(np.trace(metric)),
        "three_centre_sum_abs": float(np.sum(np.abs(three))),
        "three_centre_sum_squares": float(np.sum(three * three)),
    }


def timings():
    out = {}
    psi4.set_num_threads(1)
    g = geometry_bohr("benzene")

    def rhf():
        reset("gen_df_timing_rhf.out")
        mol = make_molecule(g, 0, 1, "benzene")
        psi4.set_options({"basis": "cc-pvdz", "puream": True, "scf_type": "df", "df_basis_scf": "cc-pvdz-jkfit",
                          "e_convergence": 1e-10, "d_convergence": 1e-8})
        return psi4.energy("scf", molecule=mol)

    def b3lyp():
        reset("gen_df_timing_b3lyp.out")
        mol = make_molecule(g, 0, 1, "benzene")
        psi4.set_options({"basis": "cc-pvdz", "puream": True, "scf_type": "df", "df_basis_scf": "cc-pvdz-jkfit",
                          "e_convergence": 1e-10, "d_convergence": 1e-8})
        return psi4.energy("b3lyp", molecule=mol)

    xyz = os.path.join(HERE, "..", "..", "engine", "scf", "testdata", "phenylalanine.xyz")

    def phe():
        reset("gen_df_timing_phe.out")
        lines = open(xyz).read().splitlines()[2:]
        mol = psi4.geometry("0 1\n" + "\n".join(lines) + "\nunits angstrom\nnocom\nnoreorient\nsymmetry c1\n")
        psi4.set_options({"basis": "6-31g*", "puream": False, "scf_type": "df", "df_basis_scf": "def2-qzvpp-jkfit",
                          "e_convergence": 1e-10, "d_convergence": 1e-8})
        return psi4.energy("scf", molecule=mol)

    jobs = [("benzene_rhf_ccpvdz", rhf, 1, "RHF/cc-pVDZ benzene, scf_type df, cc-pvdz-jkfit"),
            ("benzene_b3lyp_ccpvdz", b3lyp, 1, "B3LYP/cc-pVDZ benzene, scf_type df, cc-pvdz-jkfit, psi4's default grid")]
    if os.path.exists(xyz):
        jobs.append(("phenylalanine_rhf_631gs", phe, 2, "RHF/6-31G* (Cartesian) phenylalanine (engine/scf/testdata/phenylalanine.xyz, angstrom), "
                     "scf_type df, def2-qzvpp-jkfit (= def2-universal-JKFIT)"))
    for key, fn, threads, what in jobs:
        psi4.set_num_threads(threads)
        e, recs = timed(fn, 3)
        t = {"what": what + "; e_convergence 1e-10, d_convergence 1e-8; wall time of the whole psi4.energy call",
             "threads": threads, "energy_total_hartree": float(e), "scf_iterations": int(psi4.variable("SCF ITERATIONS"))}
        t.update(timing_summary(recs))
        out[key] = t
        print(key, t["wall_seconds_min"], t["cpu_seconds_min"], flush=True)
    return out


def main():
    if len(sys.argv) > 1 and sys.argv[1] == "timing":
        path = os.path.join(HERE, "df_energies.json")
        doc = json.load(open(path))
        doc["timings"] = {"note": "measured by 'gen_df.py timing' on the machine named in 'machine'. " + TIMING_NOTE}
        doc["timings"].update(timings())
        write_json("df_energies.json", doc)
        return
    psi4.set_num_threads(2)
    cases = [run_case(*c) for c in CASES]
    doc = header("gen_df.py")
    common = dict(SCF_COMMON_DOC)
    common["density_fitting"] = DF_DOC
    common["grid_for_dft_cases"] = dict(FINE_GRID, note="the unpruned fine grid of gen_dft.py (250 x 5810, Treutler, Lebedev)")
    common["exact_energy"] = "energy_total_exact_hartree: the same case with scf_type pk (exact four-index J and K), other settings equal"
    doc["common_settings"] = common
    doc["cases"] = cases
    doc["water_integrals"] = water_integrals()
    write_json("df_energies.json", doc)


if __name__ == "__main__":
    main()
