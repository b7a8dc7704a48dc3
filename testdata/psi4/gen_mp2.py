"""Generate testdata/psi4/mp2.json: conventional RMP2/UMP2 check values from
psi4 (OCC module, mp2_type conv), relaxed MP2 dipoles by finite differences of
energies in a uniform field, SCF multipoles of the same molecules, and a
benzene MP2/cc-pVDZ one-core timing.

Run: cd testdata/psi4 && /usr/bin/python3 gen_mp2.py
"""
import sys

from common import (TIMING_NOTE, timed, timing_summary, SCF_COMMON, SCF_COMMON_DOC, MULTIPOLE_DEFINITION, arr, geometry_bohr, header,
                    make_molecule, multipoles, psi4, reset, spin_squared, write_json, np)

MP2_OPTS = {"mp2_type": "conv", "qc_module": "occ"}

# name, geometry key, charge, mult, basis, puream, reference, freeze_core
CASES = [
    ("h2o_rmp2_sto3g", "h2o_sto3g_ref", 0, 1, "sto-3g", True, "rhf", False),
    ("h2o_rmp2_ccpvdz", "h2o", 0, 1, "cc-pvdz", True, "rhf", False),
    ("h2o_rmp2_ccpvdz_fc", "h2o", 0, 1, "cc-pvdz", True, "rhf", True),
    ("nh3_rmp2_631gs", "nh3", 0, 1, "6-31g*", False, "rhf", False),
    ("hf_rmp2_ccpvtz_fc", "hf", 0, 1, "cc-pvtz", True, "rhf", True),
    ("co_rmp2_augccpvdz", "co", 0, 1, "aug-cc-pvdz", True, "rhf", False),
    ("h2s_rmp2_ccpvdz_fc", "h2s", 0, 1, "cc-pvdz", True, "rhf", True),
    ("ch4_rmp2_631gs_fc", "ch4", 0, 1, "6-31g*", False, "rhf", True),
    ("oh_ump2_ccpvdz", "oh", 0, 2, "cc-pvdz", True, "uhf", False),
    ("oh_ump2_ccpvdz_fc", "oh", 0, 2, "cc-pvdz", True, "uhf", True),
    ("ch3_ump2_631g", "ch3", 0, 2, "6-31g", False, "uhf", False),
    ("h2o_cation_ump2_ccpvdz", "h2o", 1, 2, "cc-pvdz", True, "uhf", False),
]

# name, geometry key, basis, puream
DIPOLE_CASES = [
    ("h2o_ccpvdz", "h2o", "cc-pvdz", True),
    ("co_augccpvdz", "co", "aug-cc-pvdz", True),
    ("nh3_631gs", "nh3", "6-31g*", False),
    ("hf_ccpvdz", "hf", "cc-pvdz", True),
]
FIELD_STEP = 0.0005

VARS = ["MP2 TOTAL ENERGY", "MP2 CORRELATION ENERGY", "MP2 SAME-SPIN CORRELATION ENERGY",
        "MP2 OPPOSITE-SPIN CORRELATION ENERGY", "SCS-MP2 TOTAL ENERGY", "SCS-MP2 CORRELATION ENERGY",
        "SCF TOTAL ENERGY"]


def var_or_none(k):
    return float(psi4.variable(k)) if psi4.core.has_variable(k) else None


def mp2_run(geom, charge, mult, basis, puream, ref, fc, field=None, tag="x"):
    reset("gen_mp2_%s.out" % tag)
    mol = make_molecule(geom, charge, mult, tag)
    opts = dict(SCF_COMMON)
    opts.update(MP2_OPTS)
    opts.update({"basis": basis, "puream": puream, "reference": ref, "freeze_core": fc})
    if field is not None:
        opts.update({"perturb_h": True, "perturb_with": "dipole", "perturb_dipole": list(field)})
    psi4.set_options(opts)
    e, wfn = psi4.energy("mp2", molecule=mol, return_wfn=True)
    return e, wfn, mol


def run_case(name, gkey, charge, mult, basis, puream, ref, fc):
    geom = geometry_bohr(gkey)
    e, wfn, mol = mp2_run(geom, charge, mult, basis, puream, ref, fc, tag=name)
    v = {k: var_or_none(k) for k in VARS}
    if name == CASES[0][0]:
        print(sorted(psi4.core.variables().keys()), file=sys.stderr)
    assert abs(v["MP2 TOTAL ENERGY"] - e) < 1e-12
    nfrz = int(wfn.frzcpi().sum())
    out = {
        "name": name,
        "geometry_bohr": geom,
        "charge": charge,
        "multiplicity": mult,
        "basis": basis,
        "puream": puream,
        "reference": ref,
        "method": "RMP2" if ref == "rhf" else "UMP2",
        "freeze_core": fc,
        "n_frozen_core_orbitals": nfrz,
        "n_frozen_virtual_orbitals": int(wfn.frzvpi().sum()),
        "n_basis_functions": wfn.basisset().nbf(),
        "scf_energy_hartree": v["SCF TOTAL ENERGY"],
        "mp2_total_energy_hartree": v["MP2 TOTAL ENERGY"],
        "mp2_correlation_energy_hartree": v["MP2 CORRELATION ENERGY"],
        "mp2_same_spin_correlation_hartree": v["MP2 SAME-SPIN CORRELATION ENERGY"],
        "mp2_opposite_spin_correlation_hartree": v["MP2 OPPOSITE-SPIN CORRELATION ENERGY"],
        "scs_mp2_total_energy_hartree": v["SCS-MP2 TOTAL ENERGY"],
        "scs_mp2_correlation_energy_hartree": v["SCS-MP2 CORRELATION ENERGY"],
    }
    ss, os_ = out["mp2_same_spin_correlation_hartree"], out["mp2_opposite_spin_correlation_hartree"]
    assert abs(ss + os_ - out["mp2_correlation_energy_hartree"]) < 1e-10
    if out["scs_mp2_correlation_energy_hartree"] is not None:
        assert abs(1.2 * os_ + ss / 3.0 - out["scs_mp2_correlation_energy_hartree"]) < 1e-10
    if ref == "uhf":
        out["s_squared_reference"] = spin_squared(wfn)
    print("%-26s scf %.12f mp2corr %.12f nfrz %d" % (name, out["scf_energy_hartree"],
                                                      out["mp2_correlation_energy_hartree"], nfrz))
    return out


def dipole_case(name, gkey, basis, puream):
    geom = geometry_bohr(gkey)
    e0, wfn0, mol = mp2_run(geom, 0, 1, basis, puream, "rhf", False, tag=name + "_f0")
    e0_scf = float(psi4.variable("SCF TOTAL ENERGY"))
    # SCF multipoles need the unperturbed SCF wavefunction: wfn0 of an MP2 run
    # is the OCC wavefunction built on it; rebuild with a plain SCF for clarity.
    reset("gen_mp2_%s_scf.out" % name)
    mol = make_molecule(geom, 0, 1, name)
    opts = dict(SCF_COMMON)
    opts.update({"basis": basis, "puream": puream, "reference": "rhf"})
    psi4.set_options(opts)
    escf, wscf = psi4.energy("scf", molecule=mol, return_wfn=True)
    assert abs(escf - e0_scf) < 1e-10
    scf_mp = multipoles(wscf, geom)
    energies = {}
    for k in range(3):
        for s in (+1, -1):
            for mult in (1, 2):
                f = [0.0, 0.0, 0.0]
                f[k] = s * mult * FIELD_STEP
                e, _, _ = mp2_run(geom, 0, 1, basis, puream, "rhf", False, field=f,
                                  tag="%s_f%d%d%d" % (name, k, s, mult))
                energies[(k, s, mult)] = (float(psi4.variable("SCF TOTAL ENERGY")), float(e))
    d_mp2, d_mp2_2h, d_mp2_rich, d_scf, d_scf_rich = [], [], [], [], []
    for k in range(3):
        h = FIELD_STEP
        dm1 = (energies[(k, 1, 1)][1] - energies[(k, -1, 1)][1]) / (2 * h)
        dm2 = (energies[(k, 1, 2)][1] - energies[(k, -1, 2)][1]) / (4 * h)
        ds1 = (energies[(k, 1, 1)][0] - energies[(k, -1, 1)][0]) / (2 * h)
        ds2 = (energies[(k, 1, 2)][0] - energies[(k, -1, 2)][0]) / (4 * h)
        d_mp2.append(dm1)
        d_mp2_2h.append(dm2)
        d_mp2_rich.append((4 * dm1 - dm2) / 3)
        d_scf.append(ds1)
        d_scf_rich.append((4 * ds1 - ds2) / 3)
    err = [abs(a - b) for a, b in zip(d_mp2, d_mp2_rich)]
    scf_fd_vs_analytic = max(abs(a - b) for a, b in zip(d_scf_rich, scf_mp["dipole_au"]))
    print("%-14s mp2 dipole %s  scf fd-analytic %.2e" % (name, d_mp2, scf_fd_vs_analytic))
    out = {
        "name": name,
        "geometry_bohr": geom,
        "charge": 0,
        "multiplicity": 1,
        "basis": basis,
        "puream": puream,
        "reference": "rhf",
        "freeze_core": False,
        "scf_energy_hartree": e0_scf,
        "mp2_total_energy_hartree": float(e0),
        "mp2_relaxed_dipole_au": d_mp2,
        "mp2_relaxed_dipole_richardson_au": d_mp2_rich,
        "mp2_relaxed_dipole_step_2h_au": d_mp2_2h,
        "mp2_relaxed_dipole_fd_error_estimate_au": err,
        "scf_dipole_finite_field_richardson_au": d_scf_rich,
        "scf_dipole_finite_field_minus_analytic_max_abs_au": scf_fd_vs_analytic,
        "field_energies_hartree": [
            {"perturb_dipole": [(s * m * FIELD_STEP if i == k else 0.0) for i in range(3)],
             "scf_energy": energies[(k, s, m)][0], "mp2_total_energy": energies[(k, s, m)][1]}
            for k in range(3) for s in (1, -1) for m in (1, 2)],
        "scf": scf_mp,
    }
    return out


def benzene_timing():
    psi4.set_num_threads(1)
    geom = geometry_bohr("benzene")
    (e, wfn, _), recs = timed(lambda: mp2_run(geom, 0, 1, "cc-pvdz", True, "rhf", False, tag="benzene_timing"), 3)
    t = {
        "what": "psi4.energy('mp2') conventional RMP2/cc-pVDZ benzene, all electrons, scf_type pk, "
                "mp2_type conv, qc_module occ, settings as common_settings; wall time of the whole call "
                "(integrals, SCF, MO transformation, MP2)",
        "threads": 1,
        "scf_energy_hartree": float(psi4.variable("SCF TOTAL ENERGY")),
        "mp2_total_energy_hartree": float(e),
        "mp2_correlation_energy_hartree": float(psi4.variable("MP2 CORRELATION ENERGY")),
    }
    t.update(timing_summary(recs))
    print("benzene mp2 1 thread", t["wall_seconds_min"], t["cpu_seconds_min"])
    return [t]


def main():
    psi4.set_num_threads(1)
    cases = [run_case(*c) for c in CASES]
    dips = [dipole_case(*c) for c in DIPOLE_CASES]
    doc = header("gen_mp2.py")
    common = dict(SCF_COMMON_DOC)
    common.update({
        "mp2_type": "conv (conventional integrals, no density fitting)",
        "qc_module": "occ (psi4's OCC module; FNOCC gives identical conventional MP2 and finite-field numbers, checked while writing this generator)",
        "freeze_core": "psi4 freeze_core true freezes the previous-shell core: 1s for C,N,O,F (1 orbital each), 1s2s2p for S, Cl (5 orbitals); see n_frozen_core_orbitals. false = all electrons correlated",
        "spin_components": "same-spin = alpha-alpha + beta-beta pair energies; opposite-spin = alpha-beta; same + opposite = correlation energy (asserted)",
        "scs_mp2": "psi4 OCC default SCS-MP2: E_corr(SCS) = 6/5 E_os + 1/3 E_ss (asserted against psi4's numbers)",
        "ump2": "UMP2 on a UHF reference (reference uhf)",
        "finite_field": {
            "psi4_options": "perturb_h true, perturb_with dipole, perturb_dipole [lx, ly, lz]",
            "sign_convention": "psi4 1.3.2 adds lambda . mu_op to the Hamiltonian, where mu_op is the total dipole operator (nuclei + electrons with charge -1); the nuclear term lambda . mu_nuc is included in the energy (verified: shifting the frame changes nothing for a neutral molecule, and the SCF finite-field derivative equals the analytic total SCF dipole). So E(lambda) = E0 + lambda . mu + O(lambda^2), i.e. mu = +dE/dlambda, and the physical field is F = -lambda",
            "step_au": FIELD_STEP,
            "formula": "mp2_relaxed_dipole_au[k] = (E(+h e_k) - E(-h e_k)) / (2h) with h = step_au; mp2_relaxed_dipole_step_2h_au uses 2h; Richardson = (4 D(h) - D(2h)) / 3; fd_error_estimate = |D(h) - Richardson|",
            "meaning": "derivative of the conventional MP2 total energy (all electrons) with respect to the field, i.e. the orbital-relaxed MP2 dipole, about origin (0,0,0) (origin-independent for these neutral molecules)",
        },
        "multipole_definition": MULTIPOLE_DEFINITION,
    })
    doc["common_settings"] = common
    doc["cases"] = cases
    doc["dipole_cases"] = dips
    doc["timings"] = {
        "note": "measured by this script on the machine named in 'machine'. " + TIMING_NOTE,
        "benzene_rmp2_ccpvdz": benzene_timing(),
    }
    write_json("mp2.json", doc)


if __name__ == "__main__":
    main()
