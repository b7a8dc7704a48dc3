"""Generate testdata/psi4/dft_energies.json: RKS/UKS total energies from psi4
on a very fine, unpruned grid with conventional (pk) Coulomb/exchange, and a
benzene B3LYP/cc-pVDZ timing on psi4's default grid with its default density
fitting.

Run: cd testdata/psi4 && /usr/bin/python3 gen_dft.py          # cases (2 threads)
     cd testdata/psi4 && /usr/bin/python3 gen_dft.py timing   # adds the timing (1 thread)
"""
import json
import os
import re
import sys
import time

from common import (HERE, TIMING_NOTE, timed, timing_summary, SCF_COMMON, SCF_COMMON_DOC, arr, geometry_bohr, header, make_molecule,
                    psi4, reset, spin_squared, write_json, np)

FINE_GRID = {
    "dft_radial_points": 250,
    "dft_spherical_points": 5810,
    "dft_radial_scheme": "treutler",
    "dft_nuclear_scheme": "treutler",
    "dft_spherical_scheme": "lebedev",
    "dft_pruning_scheme": "flat",
    "dft_bs_radius_alpha": 1.0,
    "dft_basis_tolerance": 1e-14,
}
CHECK_GRID = {"dft_radial_points": 200, "dft_spherical_points": 3890}

# psi4 1.3.2's "SVWN" is Slater + VWN-RPA (LDA_C_VWN_RPA); SVWN5 is defined here
# explicitly with libxc's LDA_C_VWN (= VWN5).
SVWN5 = {"name": "SVWN5", "x_functionals": {"LDA_X": {}}, "c_functionals": {"LDA_C_VWN": {}}}

FUNCTIONAL_DEFS = {
    "svwn5": "dict functional defined in this generator: x = libxc LDA_X (coefficient 1), c = libxc LDA_C_VWN (VWN5, coefficient 1)",
    "svwn": "psi4 1.3.2 built-in 'SVWN' = libxc LDA_X + LDA_C_VWN_RPA (psi4 calls it SVWN3 (RPA); it is the VWN parametrisation of the RPA correlation energy, libxc id 8), NOT VWN5",
    "blyp": "psi4 built-in BLYP = libxc GGA_X_B88 + GGA_C_LYP",
    "pbe": "psi4 built-in PBE = libxc GGA_X_PBE + GGA_C_PBE",
    "b3lyp": "psi4 built-in B3LYP = libxc HYB_GGA_XC_B3LYP (id 402): 0.08 LDA_X + 0.72 GGA_X_B88 + 0.20 exact exchange, 0.19 LDA_C_VWN_RPA + 0.81 GGA_C_LYP (VWN-RPA, the 'Gaussian' B3LYP); see testdata/libxc/kernels.json hybrid_definitions",
    "b3lyp5": "psi4 built-in B3LYP5 = libxc HYB_GGA_XC_B3LYP5 (id 475): as B3LYP but with LDA_C_VWN (VWN5)",
    "pbe0": "psi4 built-in PBE0 = libxc HYB_GGA_XC_PBEH (id 406): 0.75 GGA_X_PBE + 0.25 exact exchange + 1.0 GGA_C_PBE",
}

# name, geometry key, charge, mult, basis, puream, reference, functional key
CASES = [
    ("h2o_rks_svwn5_ccpvdz", "h2o", 0, 1, "cc-pvdz", True, "rks", "svwn5"),
    ("h2o_rks_svwn_rpa_ccpvdz", "h2o", 0, 1, "cc-pvdz", True, "rks", "svwn"),
    ("h2o_rks_blyp_ccpvdz", "h2o", 0, 1, "cc-pvdz", True, "rks", "blyp"),
    ("h2o_rks_b3lyp_ccpvdz", "h2o", 0, 1, "cc-pvdz", True, "rks", "b3lyp"),
    ("h2o_rks_pbe0_ccpvdz", "h2o", 0, 1, "cc-pvdz", True, "rks", "pbe0"),
    ("nh3_rks_pbe_631gs", "nh3", 0, 1, "6-31g*", False, "rks", "pbe"),
    ("co_rks_b3lyp_ccpvdz", "co", 0, 1, "cc-pvdz", True, "rks", "b3lyp"),
    ("hf_rks_b3lyp5_ccpvdz", "hf", 0, 1, "cc-pvdz", True, "rks", "b3lyp5"),
    ("ch4_rks_pbe0_631gs", "ch4", 0, 1, "6-31g*", False, "rks", "pbe0"),
    ("oh_uks_b3lyp_ccpvdz", "oh", 0, 2, "cc-pvdz", True, "uks", "b3lyp"),
    ("oh_uks_svwn5_ccpvdz", "oh", 0, 2, "cc-pvdz", True, "uks", "svwn5"),
    ("ch3_uks_pbe_631g", "ch3", 0, 2, "6-31g", False, "uks", "pbe"),
    ("ch3_uks_blyp_631g", "ch3", 0, 2, "6-31g", False, "uks", "blyp"),
]


def func_arg(key):
    if key == "svwn5":
        return {"dft_functional": SVWN5}
    return {"name": key}


def total_points(outfile):
    txt = open(outfile).read()
    m = re.findall(r"Total Points\s*=\s*(\d+)", txt)
    return int(m[-1]) if m else None


def run(geom, charge, mult, basis, puream, ref, fkey, grid, tag):
    out = "gen_dft_%s.out" % tag
    reset(out)
    mol = make_molecule(geom, charge, mult, tag)
    opts = dict(SCF_COMMON)
    opts.update(grid)
    opts.update({"basis": basis, "puream": puream, "reference": ref})
    psi4.set_options(opts)
    fa = func_arg(fkey)
    if "name" in fa:
        e, wfn = psi4.energy(fa["name"], molecule=mol, return_wfn=True)
    else:
        e, wfn = psi4.energy("scf", dft_functional=fa["dft_functional"], molecule=mol, return_wfn=True)
    return e, wfn, mol, os.path.join("/tmp", out)


def run_case(name, gkey, charge, mult, basis, puream, ref, fkey):
    geom = geometry_bohr(gkey)
    t0 = time.time()
    e, wfn, mol, outfile = run(geom, charge, mult, basis, puream, ref, fkey, FINE_GRID, name)
    wall = time.time() - t0
    v = lambda k: float(psi4.variable(k)) if psi4.core.has_variable(k) else None
    res = {
        "name": name,
        "geometry_bohr": geom,
        "charge": charge,
        "multiplicity": mult,
        "basis": basis,
        "puream": puream,
        "reference": ref,
        "functional": fkey,
        "functional_definition": FUNCTIONAL_DEFS[fkey],
        "n_basis_functions": wfn.basisset().nbf(),
        "energy_total_hartree": float(e),
        "nuclear_repulsion_hartree": float(mol.nuclear_repulsion_energy()),
        "one_electron_energy_hartree": v("ONE-ELECTRON ENERGY"),
        "two_electron_energy_hartree": v("TWO-ELECTRON ENERGY"),
        "xc_energy_hartree": v("DFT XC ENERGY"),
        "grid_total_points": total_points(outfile),
        "orbital_energies_alpha_hartree": arr(wfn.epsilon_a()),
        "orbital_energies_beta_hartree": arr(wfn.epsilon_b()),
        "wall_seconds_2_threads": round(wall, 1),
    }
    s = res["nuclear_repulsion_hartree"] + res["one_electron_energy_hartree"] + \
        res["two_electron_energy_hartree"] + res["xc_energy_hartree"]
    assert abs(s - e) < 1e-8, (s, e)
    if ref == "uks":
        res["s_squared_kohn_sham_determinant"] = spin_squared(wfn)
    g2 = dict(FINE_GRID)
    g2.update(CHECK_GRID)
    e2, _, _, _ = run(geom, charge, mult, basis, puream, ref, fkey, g2, name + "_check")
    res["energy_total_check_grid_hartree"] = float(e2)
    res["grid_error_estimate_hartree"] = abs(float(e2) - float(e))
    print("%-26s %.12f  grid diff %.1e  %.0fs" % (name, e, abs(e2 - e), wall), flush=True)
    return res


def benzene_timing():
    psi4.set_num_threads(1)
    geom = geometry_bohr("benzene")

    def job():
        reset("gen_dft_benzene_timing.out")
        mol = make_molecule(geom, 0, 1, "benzene")
        psi4.set_options({"basis": "cc-pvdz", "puream": True})
        return psi4.energy("b3lyp", molecule=mol)

    e, recs = timed(job, 3)
    grid = {k: psi4.core.get_option("SCF", k) for k in
            ["DFT_RADIAL_POINTS", "DFT_SPHERICAL_POINTS", "DFT_RADIAL_SCHEME", "DFT_NUCLEAR_SCHEME",
             "DFT_PRUNING_SCHEME", "DFT_BASIS_TOLERANCE"]}
    # psi4's driver changes SCF_TYPE / convergence defaults inside energy() and restores
    # them afterwards, so read what was really used from the output file.
    txt = open("/tmp/gen_dft_benzene_timing.out").read()
    grid["SCF_TYPE (from output)"] = re.search(r"SCF Algorithm Type is (\S+)\.", txt).group(1)
    grid["E_CONVERGENCE (from output)"] = float(re.search(r"Energy threshold\s*=\s*(\S+)", txt).group(1))
    grid["D_CONVERGENCE (from output)"] = float(re.search(r"Density threshold\s*=\s*(\S+)", txt).group(1))
    grid["DF_BASIS_SCF (from output)"] = re.search(r"Blend: (\S+JKFIT)", txt).group(1)
    t = {
        "what": "psi4.energy('b3lyp') RKS B3LYP/cc-pVDZ benzene with psi4 1.3.2 defaults (scf_type df with "
                "cc-pvdz-jkfit, default grid, default convergence); wall time of the whole call",
        "threads": 1,
        "energy_total_hartree": float(e),
        "scf_iterations": int(psi4.variable("SCF ITERATIONS")),
        "grid_total_points": total_points("/tmp/gen_dft_benzene_timing.out"),
        "psi4_options_in_effect": {k.lower(): v for k, v in grid.items()},
    }
    t.update(timing_summary(recs))
    print("benzene b3lyp 1 thread", t["wall_seconds_min"], t["cpu_seconds_min"], e)
    return [t]


def main():
    if len(sys.argv) > 1 and sys.argv[1] == "timing":
        path = os.path.join(HERE, "dft_energies.json")
        doc = json.load(open(path))
        doc["timings"] = {
            "note": "measured by 'gen_dft.py timing' on the machine named in 'machine'. " + TIMING_NOTE,
            "benzene_rks_b3lyp_ccpvdz_default_grid": benzene_timing(),
        }
        write_json("dft_energies.json", doc)
        return
    psi4.set_num_threads(2)
    cases = [run_case(*c) for c in CASES]
    doc = header("gen_dft.py")
    common = dict(SCF_COMMON_DOC)
    common.update({
        "grid": dict(FINE_GRID, **{
            "note": "psi4 1.3.2 grid options exactly as set; Treutler radial quadrature and Treutler-Ahlrichs (Becke-type) "
                    "nuclear partitioning, Lebedev angular grid, 'flat' = no pruning (psi4 1.3.2 has no 'none' choice; "
                    "flat is its unpruned grid), dft_bs_radius_alpha 1.0",
            "dft_density_tolerance": "not an option in psi4 1.3.2; libxc 5.2.3 default density thresholds apply "
                                     "(see testdata/libxc/kernels.json dens_threshold)",
            "check_grid": "each case was repeated with dft_radial_points 200, dft_spherical_points 3890; "
                          "grid_error_estimate_hartree = |E(check) - E(fine)|",
        }),
        "coulomb_exchange": "scf_type pk: exact four-index J and exact exchange K (for hybrids), no density fitting",
        "xc_library": "psi4 1.3.2 links Debian's libxc 5.2.3 (same library as testdata/libxc)",
        "functional_definitions": FUNCTIONAL_DEFS,
        "energy_breakdown": "energy_total = nuclear_repulsion + one_electron_energy + two_electron_energy + xc_energy, "
                            "where two_electron_energy = Coulomb + (exact-exchange fraction x HF exchange) and "
                            "xc_energy = psi4 'DFT XC ENERGY' (the grid-integrated libxc part)",
        "threads": 2,
        "wall_seconds_2_threads": "per-case wall time of the fine-grid run, informational only (the machine was shared with another psi4 job and other developers' builds and tests); the benchmark is under timings",
    })
    doc["common_settings"] = common
    doc["cases"] = cases
    write_json("dft_energies.json", doc)


if __name__ == "__main__":
    main()
