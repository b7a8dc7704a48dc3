"""Generate testdata/psi4/cc.json: conventional closed-shell CCSD and CCSD(T)
check values from psi4 (CCENERGY module, cc_type conv, tight convergence),
finite-field CCSD(T) energies of HF in a uniform field, and (with the argument
`timing`) CCSD(T) timings of water/cc-pVTZ and benzene/cc-pVDZ.

Run: cd testdata/psi4 && /usr/bin/python3 gen_cc.py          # check values
     cd testdata/psi4 && /usr/bin/python3 gen_cc.py timing   # cc_timing.json
"""
import sys

from common import (TIMING_NOTE, timed, timing_summary, SCF_COMMON, SCF_COMMON_DOC, geometry_bohr, header,
                    make_molecule, molecule_string, psi4, reset, write_json)

CC_OPTS = {"cc_type": "conv", "qc_module": "ccenergy", "r_convergence": 1e-10, "e_convergence": 1e-12,
           "maxiter": 200}

# name, geometry key, basis, puream, freeze_core
CASES = [
    ("h2o_sto3g", "h2o_sto3g_ref", "sto-3g", True, False),
    ("h2o_ccpvdz_fc", "h2o", "cc-pvdz", True, True),
    ("n2_ccpvdz_fc", "n2", "cc-pvdz", True, True),
    ("co_631gs_fc", "co", "6-31g*", False, True),
    ("hf_ccpvtz_fc", "hf", "cc-pvtz", True, True),
    ("nh3_631g_fc", "nh3", "6-31g", False, True),
    ("ch4_631g", "ch4", "6-31g", False, False),
]

# Finite-field case: HF along z, the field only along z (x and y vanish by symmetry).
FIELD_CASE = ("hf_augccpvdz_fc", "hf", "aug-cc-pvdz", True, True)
FIELD_STEP = 0.001


def var_or_none(k):
    return float(psi4.variable(k)) if psi4.core.has_variable(k) else None


def cc_run(geom, basis, puream, fc, method="ccsd(t)", field=None, tag="x"):
    reset("gen_cc_%s.out" % tag)
    mol = make_molecule(geom, 0, 1, tag)
    opts = dict(SCF_COMMON)
    opts.update(CC_OPTS)
    opts.update({"basis": basis, "puream": puream, "reference": "rhf", "freeze_core": fc})
    if field is not None:
        opts.update({"perturb_h": True, "perturb_with": "dipole", "perturb_dipole": list(field)})
    psi4.set_options(opts)
    e, wfn = psi4.energy(method, molecule=mol, return_wfn=True)
    return float(e), wfn


def run_case(name, gkey, basis, puream, fc):
    geom = geometry_bohr(gkey)
    e, wfn = cc_run(geom, basis, puream, fc, tag=name)
    out = {
        "name": name,
        "geometry_bohr": geom,
        "charge": 0,
        "multiplicity": 1,
        "basis": basis,
        "puream": puream,
        "reference": "rhf",
        "freeze_core": fc,
        "n_frozen_core_orbitals": int(wfn.frzcpi().sum()),
        "n_basis_functions": wfn.basisset().nbf(),
        "scf_energy_hartree": var_or_none("SCF TOTAL ENERGY"),
        "mp2_correlation_energy_hartree": var_or_none("MP2 CORRELATION ENERGY"),
        "ccsd_correlation_energy_hartree": var_or_none("CCSD CORRELATION ENERGY"),
        "ccsd_total_energy_hartree": var_or_none("CCSD TOTAL ENERGY"),
        "triples_correction_hartree": var_or_none("(T) CORRECTION ENERGY"),
        "ccsd_t_total_energy_hartree": e,
    }
    assert abs(out["ccsd_total_energy_hartree"] + out["triples_correction_hartree"] - e) < 1e-10
    print("%-18s scf %.12f ccsd %.12f (t) %.12f" % (name, out["scf_energy_hartree"],
                                                  out["ccsd_correlation_energy_hartree"],
                                                  out["triples_correction_hartree"]), flush=True)
    return out


def field_case(name, gkey, basis, puream, fc):
    geom = geometry_bohr(gkey)
    h = FIELD_STEP
    energies = []
    for m in (1, -1, 2, -2):
        f = [0.0, 0.0, m * h]
        e, _ = cc_run(geom, basis, puream, fc, field=f, tag="%s_f%d" % (name, m))
        energies.append({"perturb_dipole": f, "scf_energy_hartree": var_or_none("SCF TOTAL ENERGY"),
                         "ccsd_total_energy_hartree": var_or_none("CCSD TOTAL ENERGY"),
                         "ccsd_t_total_energy_hartree": e})
    ep, em, e2p, e2m = [x["ccsd_t_total_energy_hartree"] for x in energies]
    two = (ep - em) / (2 * h)
    four = (8 * (ep - em) - (e2p - e2m)) / (12 * h)
    print("%s CCSD(T) dipole z two-point %.10f four-point %.10f au" % (name, two, four), flush=True)
    return {
        "name": name, "geometry_bohr": geom, "charge": 0, "multiplicity": 1, "basis": basis,
        "puream": puream, "reference": "rhf", "freeze_core": fc, "step_au": h,
        "field_energies": energies,
        "ccsd_t_dipole_z_two_point_au": two,
        "ccsd_t_dipole_z_four_point_au": four,
    }


def settings_doc():
    common = dict(SCF_COMMON_DOC)
    common.update({
        "cc": "psi4 energy('ccsd(t)') with cc_type conv, qc_module ccenergy, r_convergence 1e-10, "
              "e_convergence 1e-12, maxiter 200 (conventional integrals, canonical RHF reference)",
        "freeze_core": "psi4 freeze_core true freezes 1s of C, N, O, F (1 orbital each); false = all electrons",
        "finite_field": {
            "psi4_options": "perturb_h true, perturb_with dipole, perturb_dipole [0, 0, lz]",
            "sign_convention": "as in mp2.json: psi4 1.3.2 adds lambda . mu_op (total dipole operator), so "
                               "mu = +dE/dlambda and the physical field is F = -lambda",
            "formulas": "two-point (E(h) - E(-h)) / (2h); four-point (8 (E(h) - E(-h)) - (E(2h) - E(-2h))) / (12h)",
        },
    })
    return common


def timing(threads):
    out = []
    for label, gkey, basis, fc, reps in (("water_ccpvtz_fc", "h2o", "cc-pvtz", True, 2),
                                         ("benzene_ccpvdz_fc", "benzene", "cc-pvdz", True, 1)):
        geom = geometry_bohr(gkey)
        for sym in ("c1", "native"):
            def run():
                reset("gen_cc_timing_%s.out" % label)
                psi4.set_num_threads(threads)
                s = molecule_string(geom)
                if sym == "native":
                    s = s.replace("symmetry c1", "")
                mol = psi4.geometry(s, name=label)
                opts = dict(SCF_COMMON)
                opts.update(CC_OPTS)
                opts.update({"basis": basis, "puream": True, "reference": "rhf", "freeze_core": fc,
                             "r_convergence": 1e-7, "e_convergence": 1e-8})
                psi4.set_options(opts)
                return psi4.energy("ccsd(t)", molecule=mol)
            e, recs = timed(run, reps)
            rec = {"what": "psi4.energy('ccsd(t)') %s, frozen core, cc_type conv, ccenergy, r_convergence 1e-7, "
                           "e_convergence 1e-8; whole call (integrals, SCF, transformation, CCSD, (T))" % label,
                   "symmetry": sym, "threads": threads, "ccsd_t_total_energy_hartree": float(e)}
            rec.update(timing_summary(recs))
            print(label, sym, threads, rec["cpu_seconds_min"], rec["wall_seconds_min"], flush=True)
            out.append(rec)
    return out


def main():
    if len(sys.argv) > 1 and sys.argv[1] == "timing":
        threads = int(sys.argv[2]) if len(sys.argv) > 2 else 1
        doc = header("gen_cc.py")
        doc["note"] = TIMING_NOTE
        doc["timings"] = timing(threads)
        write_json("cc_timing_%dthread.json" % threads, doc)
        return
    psi4.set_num_threads(1)
    cases = [run_case(*c) for c in CASES]
    ff = field_case(*FIELD_CASE)
    doc = header("gen_cc.py")
    doc["common_settings"] = settings_doc()
    doc["cases"] = cases
    doc["field_cases"] = [ff]
    write_json("cc.json", doc)


if __name__ == "__main__":
    main()
