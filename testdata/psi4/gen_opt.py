"""Generate testdata/psi4/opt_geometries.json: tightly converged psi4
(optking) geometry optimisations, reported as internal coordinates, plus the
wall time of an HF/6-31G* optimisation of trans-1,3-butadiene (10 atoms).

Run: cd testdata/psi4 && /usr/bin/python3 gen_opt.py          # cases
     cd testdata/psi4 && /usr/bin/python3 gen_opt.py timing   # adds the butadiene timing (1 thread)
"""
import json
import math
import os
import sys
import time

from common import (ANGSTROM_TO_BOHR, HERE, TIMING_NOTE, timed, timing_summary, SCF_COMMON, SCF_COMMON_DOC, arr, header, make_molecule, psi4,
                    reset, write_json, np)

B2A = psi4.constants.bohr2angstroms  # 0.52917721067 in psi4 1.3.2


def to_bohr(atoms):
    return [[s] + [round(v * ANGSTROM_TO_BOHR, 10) + 0.0 for v in (x, y, z)] for s, x, y, z in atoms]


def butadiene():
    c2 = np.array([-0.73, 0.0, 0.0])
    c3 = -c2
    d = np.array([-math.cos(math.radians(57.0)), math.sin(math.radians(57.0)), 0.0])
    c1 = c2 + 1.34 * d
    c4 = -c1

    def rot(v, deg):
        a = math.radians(deg)
        return np.array([v[0] * math.cos(a) - v[1] * math.sin(a), v[0] * math.sin(a) + v[1] * math.cos(a), 0.0])

    u = (c2 - c1) / np.linalg.norm(c2 - c1)
    h1a, h1b = c1 + 1.09 * rot(u, 120.0), c1 + 1.09 * rot(u, -120.0)
    w = -((c1 - c2) / np.linalg.norm(c1 - c2) + (c3 - c2) / np.linalg.norm(c3 - c2))
    h2 = c2 + 1.09 * w / np.linalg.norm(w)
    atoms = [("C", c1), ("C", c2), ("C", c3), ("C", c4), ("H", h1a), ("H", h1b), ("H", h2),
             ("H", -h1a), ("H", -h1b), ("H", -h2)]
    return [[s] + [float(v) for v in p] for s, p in atoms]


START_ANGSTROM = {
    "h2o": [["O", 0.0, 0.0, 0.1173], ["H", 0.0, 0.7572, -0.4692], ["H", 0.0, -0.7572, -0.4692]],
    "nh3": [["N", 0.0, 0.0, 0.1162], ["H", 0.0, 0.9377, -0.2711], ["H", 0.8121, -0.4689, -0.2711],
            ["H", -0.8121, -0.4689, -0.2711]],
    "co": [["C", 0.0, 0.0, 0.0], ["O", 0.0, 0.0, 1.1283]],
    "hcn": [["H", 0.0, 0.0, -1.065], ["C", 0.0, 0.0, 0.0], ["N", 0.0, 0.0, 1.153]],
    "ch2o": [["C", 0.0, 0.0, 0.0], ["O", 0.0, 0.0, 1.205], ["H", 0.0, 0.943, -0.587],
             ["H", 0.0, -0.943, -0.587]],
    "butadiene": butadiene(),
}

# internal coordinates to report (0-based atom indices)
INTERNALS = {
    "h2o": {"bonds": [[0, 1], [0, 2]], "angles": [[1, 0, 2]]},
    "nh3": {"bonds": [[0, 1], [0, 2], [0, 3]], "angles": [[1, 0, 2], [1, 0, 3], [2, 0, 3]]},
    "co": {"bonds": [[0, 1]], "angles": []},
    "hcn": {"bonds": [[0, 1], [1, 2]], "angles": [[0, 1, 2]]},
    "ch2o": {"bonds": [[0, 1], [0, 2], [0, 3]], "angles": [[1, 0, 2], [1, 0, 3], [2, 0, 3]]},
    "butadiene": {"bonds": [[0, 1], [1, 2], [2, 3], [0, 4], [0, 5], [1, 6]],
                  "angles": [[0, 1, 2], [1, 2, 3], [4, 0, 1], [5, 0, 1], [6, 1, 0]],
                  "dihedrals": [[0, 1, 2, 3]]},
}

DFT_GRID = {"dft_radial_points": 150, "dft_spherical_points": 974, "dft_basis_tolerance": 1e-14,
            "dft_pruning_scheme": "flat"}

# name, start key, method, basis, puream, extra options
CASES = [
    ("h2o_hf_631gs", "h2o", "scf", "6-31g*", False, {}),
    ("nh3_hf_631gs", "nh3", "scf", "6-31g*", False, {}),
    ("co_hf_ccpvdz", "co", "scf", "cc-pvdz", True, {}),
    ("hcn_hf_ccpvdz", "hcn", "scf", "cc-pvdz", True, {}),
    ("h2o_mp2_ccpvdz", "h2o", "mp2", "cc-pvdz", True, {"mp2_type": "conv", "qc_module": "occ"}),
    ("ch2o_b3lyp_631gs", "ch2o", "b3lyp", "6-31g*", False, DFT_GRID),
]

OPT_OPTS = {"g_convergence": "gau_verytight", "geom_maxiter": 200}


def internals(geom, spec):
    R = np.array([a[1:] for a in geom])
    out = {"bonds_angstrom": [], "angles_degree": [], "dihedrals_degree": []}
    for i, j in spec.get("bonds", []):
        out["bonds_angstrom"].append({"atoms": [i, j], "value": float(np.linalg.norm(R[i] - R[j]) * B2A),
                                      "value_bohr": float(np.linalg.norm(R[i] - R[j]))})
    for i, j, k in spec.get("angles", []):
        u, v = R[i] - R[j], R[k] - R[j]
        c = np.dot(u, v) / np.linalg.norm(u) / np.linalg.norm(v)
        out["angles_degree"].append({"atoms": [i, j, k], "value": math.degrees(math.acos(max(-1.0, min(1.0, c))))})
    for i, j, k, l in spec.get("dihedrals", []):
        b0, b1, b2 = R[i] - R[j], R[k] - R[j], R[l] - R[k]
        b1n = b1 / np.linalg.norm(b1)
        v = b0 - np.dot(b0, b1n) * b1n
        w = b2 - np.dot(b2, b1n) * b1n
        x = np.dot(v, w)
        y = np.dot(np.cross(b1n, v), w)
        out["dihedrals_degree"].append({"atoms": [i, j, k, l], "value": math.degrees(math.atan2(y, x))})
    return out


def run_opt(name, skey, method, basis, puream, extra):
    reset("gen_opt_%s.out" % name)
    start = to_bohr(START_ANGSTROM[skey])
    mol = make_molecule(start, 0, 1, name)
    opts = dict(SCF_COMMON)
    opts.update(OPT_OPTS)
    opts.update(extra)
    opts.update({"basis": basis, "puream": puream, "reference": "rhf"})
    psi4.set_options(opts)
    t0 = time.time()
    e, wfn = psi4.optimize(method, molecule=mol, return_wfn=True)
    wall = time.time() - t0
    mol.update_geometry()
    g = np.asarray(mol.geometry())
    final = [[mol.symbol(i).capitalize()] + [float(v) for v in g[i]] for i in range(mol.natom())]
    grad = np.asarray(wfn.gradient()) if wfn.gradient() is not None else None
    res = {
        "name": name,
        "method": method if method != "scf" else "rhf",
        "basis": basis,
        "puream": puream,
        "charge": 0,
        "multiplicity": 1,
        "start_geometry_bohr": start,
        "final_geometry_bohr": final,
        "final_energy_hartree": float(e),
        "final_gradient_max_abs_hartree_per_bohr": float(np.max(np.abs(grad))) if grad is not None else None,
        "internal_coordinates": internals(final, INTERNALS[skey]),
        "extra_psi4_options": extra,
        "wall_seconds": round(wall, 2),
        "wall_seconds_note": "informational only (other jobs may have shared the machine); see timings for the measured benchmark",
    }
    print(name, e, [round(b["value"], 6) for b in res["internal_coordinates"]["bonds_angstrom"]],
          [round(a["value"], 4) for a in res["internal_coordinates"]["angles_degree"]], round(wall, 1), flush=True)
    return res


def main():
    if len(sys.argv) > 1 and sys.argv[1] == "timing":
        psi4.set_num_threads(1)
        t, recs = timed(lambda: run_opt("butadiene_hf_631gs", "butadiene", "scf", "6-31g*", False, {}), 2)
        t.pop("wall_seconds_note")
        t.pop("wall_seconds")
        path = os.path.join(HERE, "opt_geometries.json")
        doc = json.load(open(path))
        timing = {
            "what": "psi4.optimize('scf') trans-1,3-butadiene (10 atoms) RHF/6-31G* (Cartesian d) from a rough "
                    "planar start geometry, same options as the cases (gau_verytight, scf_type pk, e/d_convergence "
                    "1e-12/1e-10), 1 thread, whole optimisation",
            "note": TIMING_NOTE,
            "threads": 1,
        }
        timing.update(timing_summary(recs))
        timing["result"] = t
        doc["timings"] = {"butadiene_hf_631gs_optimisation": timing}
        write_json("opt_geometries.json", doc)
        return
    nthreads = int(os.environ.get("GEN_OPT_THREADS", "2"))
    psi4.set_num_threads(nthreads)
    cases = [run_opt(*c) for c in CASES]
    doc = header("gen_opt.py")
    common = dict(SCF_COMMON_DOC)
    common.update({
        "optimizer": "psi4 1.3.2 optking, default internal coordinates and RFO step",
        "g_convergence": "gau_verytight (psi4: max force 2e-6, rms force 1e-6, max disp 6e-6, rms disp 4e-6, a.u.)",
        "geom_maxiter": 200,
        "threads": nthreads,
        "angstrom_per_bohr": B2A,
        "frame": "start geometry given in bohr with nocom/noreorient/symmetry c1; final_geometry_bohr is psi4's "
                 "final molecule in that same input frame (no reorientation requested); tests should compare "
                 "internal coordinates",
        "dft_grid_for_b3lyp": DFT_GRID,
        "mp2": "conventional MP2 (mp2_type conv, OCC analytic gradients), all electrons",
        "b3lyp": "psi4 B3LYP = libxc HYB_GGA_XC_B3LYP (VWN-RPA correlation)",
    })
    doc["common_settings"] = common
    doc["cases"] = cases
    write_json("opt_geometries.json", doc)


if __name__ == "__main__":
    main()
