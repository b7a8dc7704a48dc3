"""Generate testdata/psi4/scf_energies.json: exact (conventional-integral)
RHF/UHF/ROHF check values from psi4, plus a benzene RHF/cc-pVDZ timing.

Run: cd testdata/psi4 && /usr/bin/python3 gen_scf.py
"""
from common import (TIMING_NOTE, timed, timing_summary, SCF_COMMON, SCF_COMMON_DOC, MULTIPOLE_DEFINITION, arr, geometry_bohr,
                    header, make_molecule, multipoles, psi4, reset, spin_squared, write_json, np)

# name, geometry key, charge, multiplicity, basis, puream, reference
CASES = [
    ("h2o_rhf_sto3g", "h2o_sto3g_ref", 0, 1, "sto-3g", True, "rhf"),
    ("h2o_rhf_ccpvdz", "h2o", 0, 1, "cc-pvdz", True, "rhf"),
    ("h2o_rhf_ccpvdz_cartesian", "h2o", 0, 1, "cc-pvdz", False, "rhf"),
    ("h2o_rhf_631gs", "h2o", 0, 1, "6-31g*", False, "rhf"),
    ("h2o_rhf_631gs_spherical", "h2o", 0, 1, "6-31g*", True, "rhf"),
    ("nh3_rhf_631gs", "nh3", 0, 1, "6-31g*", False, "rhf"),
    ("ch4_rhf_631gs", "ch4", 0, 1, "6-31g*", False, "rhf"),
    ("h2o_cation_uhf_ccpvdz", "h2o", 1, 2, "cc-pvdz", True, "uhf"),
    ("h2o_cation_rohf_ccpvdz", "h2o", 1, 2, "cc-pvdz", True, "rohf"),
    ("ch3_uhf_631g", "ch3", 0, 2, "6-31g", False, "uhf"),
    ("ch3_rohf_631g", "ch3", 0, 2, "6-31g", False, "rohf"),
    ("oh_uhf_ccpvdz", "oh", 0, 2, "cc-pvdz", True, "uhf"),
    ("oh_rohf_ccpvdz", "oh", 0, 2, "cc-pvdz", True, "rohf"),
    ("hf_rhf_ccpvtz", "hf", 0, 1, "cc-pvtz", True, "rhf"),
    ("hf_rhf_ccpvqz", "hf", 0, 1, "cc-pvqz", True, "rhf"),
    ("h2o_rhf_ccpvqz", "h2o", 0, 1, "cc-pvqz", True, "rhf"),
    ("h2s_rhf_ccpvdz", "h2s", 0, 1, "cc-pvdz", True, "rhf"),
    ("hcl_rhf_631gs", "hcl", 0, 1, "6-31g*", False, "rhf"),
    ("o2_triplet_uhf_631g", "o2", 0, 3, "6-31g", False, "uhf"),
    ("o2_triplet_rohf_631g", "o2", 0, 3, "6-31g", False, "rohf"),
    ("h2o_rhf_6311ppgss", "h2o", 0, 1, "6-311++g**", True, "rhf"),
    ("co_rhf_augccpvdz", "co", 0, 1, "aug-cc-pvdz", True, "rhf"),
    ("hf_rhf_augccpvdz", "hf", 0, 1, "aug-cc-pvdz", True, "rhf"),
    ("benzene_rhf_ccpvdz", "benzene", 0, 1, "cc-pvdz", True, "rhf"),
]


def run_case(name, gkey, charge, mult, basis, puream, ref):
    reset("gen_scf_%s.out" % name)
    geom = geometry_bohr(gkey)
    mol = make_molecule(geom, charge, mult, name)
    opts = dict(SCF_COMMON)
    opts.update({"basis": basis, "puream": puream, "reference": ref})
    psi4.set_options(opts)
    e, wfn = psi4.energy("scf", molecule=mol, return_wfn=True)
    out = {
        "name": name,
        "geometry_bohr": geom,
        "charge": charge,
        "multiplicity": mult,
        "basis": basis,
        "puream": puream,
        "reference": ref,
        "n_basis_functions": wfn.basisset().nbf(),
        "n_alpha": wfn.nalpha(),
        "n_beta": wfn.nbeta(),
        "energy_total_hartree": float(psi4.variable("SCF TOTAL ENERGY")),
        "nuclear_repulsion_hartree": float(mol.nuclear_repulsion_energy()),
        "one_electron_energy_hartree": float(psi4.variable("ONE-ELECTRON ENERGY")),
        "two_electron_energy_hartree": float(psi4.variable("TWO-ELECTRON ENERGY")),
        "scf_iterations": int(psi4.variable("SCF ITERATIONS")) if psi4.core.has_variable("SCF ITERATIONS") else None,
        "orbital_energies_alpha_hartree": arr(wfn.epsilon_a()),
        "orbital_energies_beta_hartree": arr(wfn.epsilon_b()),
    }
    assert abs(out["energy_total_hartree"] - e) < 1e-14
    s = out["nuclear_repulsion_hartree"] + out["one_electron_energy_hartree"] + out["two_electron_energy_hartree"]
    assert abs(s - e) < 1e-9, (s, e)
    if ref in ("uhf", "rohf"):
        out["s_squared"] = spin_squared(wfn)
        out["s_squared_note"] = ("<S^2> of the single determinant, computed by this script from psi4's "
                                 "converged orbitals and overlap matrix (psi4 1.3.2 only prints it)")
    if ref == "rohf":
        out["orbital_energies_note"] = ("psi4 ROHF: epsilon_a/epsilon_b are the eigenvalues of psi4's "
                                        "effective ROHF Fock matrix (the same set for alpha and beta); "
                                        "they depend on the choice of ROHF coupling operator and are not "
                                        "unique, compare total energies only")
    out.update(multipoles(wfn, geom))
    return out, wfn


def benzene_timing():
    timings = []
    for nthreads in (1, 2):
        psi4.set_num_threads(nthreads)
        geom = geometry_bohr("benzene")

        def job():
            reset("gen_scf_benzene_timing_%d.out" % nthreads)
            mol = make_molecule(geom, 0, 1, "benzene")
            opts = dict(SCF_COMMON)
            opts.update({"basis": "cc-pvdz", "puream": True, "reference": "rhf"})
            psi4.set_options(opts)
            return psi4.energy("scf", molecule=mol)

        e, recs = timed(job, 3)
        t = {
            "what": "psi4.energy('scf') RHF/cc-pVDZ benzene, scf_type pk, settings as common_settings, "
                    "wall time of the whole call (integrals + SAD guess + SCF iterations)",
            "threads": nthreads,
            "energy_total_hartree": float(e),
            "scf_iterations": int(psi4.variable("SCF ITERATIONS")),
        }
        t.update(timing_summary(recs))
        timings.append(t)
        print("benzene threads", nthreads, t["wall_seconds_min"], t["cpu_seconds_min"])
    psi4.set_num_threads(1)
    return timings


def main():
    psi4.set_num_threads(1)
    cases = []
    for c in CASES:
        out, _ = run_case(*c)
        print("%-28s %.12f" % (c[0], out["energy_total_hartree"]))
        cases.append(out)
    doc = header("gen_scf.py")
    common = dict(SCF_COMMON_DOC)
    common["puream_note"] = ("puream was set explicitly for every case through psi4's global PUREAM option "
                             "(true = spherical harmonics, false = Cartesian); see each case")
    common["basis_set_files"] = ("psi4 1.3.2 library .gbs files (/usr/share/psi4/basis/<name>.gbs, "
                                 "Debian psi4-data)")
    common["multipole_definition"] = MULTIPOLE_DEFINITION
    common["energy_breakdown"] = ("energy_total = nuclear_repulsion + one_electron_energy + "
                                  "two_electron_energy (psi4 variables ONE-ELECTRON ENERGY and "
                                  "TWO-ELECTRON ENERGY; one-electron = sum D(T+V), two-electron = "
                                  "Coulomb + exchange parts)")
    doc["common_settings"] = common
    doc["cases"] = cases
    doc["timings"] = {
        "note": "measured by this script on the machine named in 'machine'; psi4.set_num_threads(n). " + TIMING_NOTE,
        "benzene_rhf_ccpvdz": benzene_timing(),
    }
    write_json("scf_energies.json", doc)


if __name__ == "__main__":
    main()
