"""Generate testdata/psi4/freq.json: harmonic vibrational wavenumbers and
zero-point energies from psi4 at psi4's own tightly optimised geometries.

Each case is optimised first (gau_verytight), then psi4.frequency runs at the
final geometry, which is stored in bohr (final_geometry_bohr) so that the Go
test computes its frequencies at exactly the same nuclear positions. Masses:
psi4's most-abundant-isotope masses (psi4 default).

Run: cd testdata/psi4 && /usr/bin/python3 gen_freq.py
"""
import os

from common import (SCF_COMMON, SCF_COMMON_DOC, arr, header, make_molecule, psi4, reset, write_json, np,
                    ANGSTROM_TO_BOHR)

B2A = psi4.constants.bohr2angstroms

START_ANGSTROM = {
    "h2o": [["O", 0.0, 0.0, 0.1173], ["H", 0.0, 0.7572, -0.4692], ["H", 0.0, -0.7572, -0.4692]],
    "hcn": [["H", 0.0, 0.0, -1.065], ["C", 0.0, 0.0, 0.0], ["N", 0.0, 0.0, 1.153]],
}

# name, start key, psi4 method, basis, puream, extra options, dertype (2 analytic Hessian, 1 differences of gradients)
CASES = [
    ("h2o_hf_631gs", "h2o", "scf", "6-31g*", False, {}, 2),
    ("hcn_hf_ccpvdz", "hcn", "scf", "cc-pvdz", True, {}, 2),
    ("h2o_mp2_ccpvdz", "h2o", "mp2", "cc-pvdz", True, {"mp2_type": "conv", "qc_module": "occ"}, 1),
]

OPT_OPTS = {"g_convergence": "gau_verytight", "geom_maxiter": 200}


def to_bohr(atoms):
    return [[s] + [round(v * ANGSTROM_TO_BOHR, 10) + 0.0 for v in (x, y, z)] for s, x, y, z in atoms]


def run(name, skey, method, basis, puream, extra, dertype):
    reset("gen_freq_%s.out" % name)
    mol = make_molecule(to_bohr(START_ANGSTROM[skey]), 0, 1, name)
    opts = dict(SCF_COMMON)
    opts.update(OPT_OPTS)
    opts.update(extra)
    opts.update({"basis": basis, "puream": puream, "reference": "rhf"})
    psi4.set_options(opts)
    psi4.optimize(method, molecule=mol)
    mol.update_geometry()
    g = np.asarray(mol.geometry())
    final = [[mol.symbol(i).capitalize()] + [float(v) for v in g[i]] for i in range(mol.natom())]
    # Frequencies at exactly the stored geometry.
    fmol = make_molecule(final, 0, 1, name + "_f")
    used = dertype
    try:
        e, wfn = psi4.frequency(method, molecule=fmol, return_wfn=True, dertype=dertype)
    except Exception as ex:  # no analytic Hessian for this method in this psi4 build
        if dertype != 2:
            raise
        print("analytic Hessian unavailable (%s); differences of gradients" % ex, flush=True)
        used = 1
        e, wfn = psi4.frequency(method, molecule=fmol, return_wfn=True, dertype=1)
    freqs = [float(v) for v in np.asarray(wfn.frequencies())]
    zpve = float(psi4.variable("ZPVE"))
    grad = psi4.gradient(method, molecule=fmol)
    res = {
        "name": name,
        "method": "rhf" if method == "scf" else method,
        "basis": basis,
        "puream": puream,
        "charge": 0,
        "multiplicity": 1,
        "final_geometry_bohr": final,
        "energy_hartree": float(e),
        "gradient_max_abs_hartree_per_bohr": float(np.max(np.abs(np.asarray(grad)))),
        "harmonic_wavenumbers_per_cm": freqs,
        "zero_point_energy_hartree": zpve,
        "psi4_dertype": used,
        "psi4_dertype_meaning": {2: "analytic Hessian", 1: "finite differences of analytic gradients (psi4 findif, 3-point)"}[used],
        "extra_psi4_options": extra,
    }
    print(name, ["%.2f" % f for f in freqs], res["zero_point_energy_hartree"], flush=True)
    return res


def main():
    psi4.set_num_threads(int(os.environ.get("GEN_FREQ_THREADS", "2")))
    cases = [run(*c) for c in CASES]
    doc = header("gen_freq.py")
    common = dict(SCF_COMMON_DOC)
    common.update({
        "optimizer": "psi4 1.3.2 optking, gau_verytight, then psi4.frequency at the final geometry",
        "frequencies": "psi4.frequency default projection of translations and rotations; wavenumbers in cm^-1 "
                       "ascending, vibrational modes only (3N-6, or 3N-5 for linear molecules)",
        "masses": "psi4 default: most abundant isotopes",
        "zero_point_energy": "psi4 variable ZPVE (hartree), half the sum of the harmonic vibrational energies",
        "mp2": "conventional MP2 (mp2_type conv, OCC analytic gradients), all electrons",
        "angstrom_per_bohr": B2A,
    })
    doc["common_settings"] = common
    doc["cases"] = cases
    write_json("freq.json", doc)


if __name__ == "__main__":
    main()
