"""Shared helpers for the psi4 check-value generators in testdata/psi4.

Run every generator with Debian's interpreter, which is the one psi4 is built
for:

    cd testdata/psi4 && /usr/bin/python3 gen_scf.py

The generators import psi4 from /usr/lib/x86_64-linux-gnu (Debian package
`psi4`). Output JSON is written next to the scripts. CI never runs these; Go
tests only read the JSON.

Geometry convention: every geometry is defined here once in Angstrom (rough
near-equilibrium structures), converted ONCE to bohr with ANGSTROM_TO_BOHR
below, rounded to 10 decimals, and from then on only the rounded bohr numbers
are used: they are handed to psi4 with `units bohr`, `nocom`, `noreorient`,
`symmetry c1`, and stored in the JSON as `geometry_bohr`. Our engine must use
the stored bohr numbers directly, so no Angstrom/bohr constant enters the
comparison.
"""

import datetime
import json
import math
import os
import platform
import sys
import time

sys.path.insert(0, "/usr/lib/x86_64-linux-gnu")
import numpy as np  # noqa: E402
import psi4  # noqa: E402

HERE = os.path.dirname(os.path.abspath(__file__))
# psi4 drops timer.dat and scratch files into the working directory: keep them out of the tree.
SCRATCH = "/tmp/moltrail_psi4_gen"
os.makedirs(SCRATCH, exist_ok=True)
os.chdir(SCRATCH)

# Only used to turn the Angstrom templates below into the bohr inputs.
# (CODATA 2014 bohr radius 0.52917721067 A, as psi4 1.3 uses internally.)
BOHR_IN_ANGSTROM = 0.52917721067
ANGSTROM_TO_BOHR = 1.0 / BOHR_IN_ANGSTROM

# Near-equilibrium geometries in Angstrom (inputs only; exactness irrelevant).
def _benzene():
    atoms = []
    rcc, rch = 1.39, 1.09
    for k in range(6):
        a = math.radians(60.0 * k)
        atoms.append(["C", rcc * math.cos(a), rcc * math.sin(a), 0.0])
    for k in range(6):
        a = math.radians(60.0 * k)
        atoms.append(["H", (rcc + rch) * math.cos(a), (rcc + rch) * math.sin(a), 0.0])
    return atoms


def _h2s():
    r, ang = 1.336, 92.1
    h = math.radians(ang / 2)
    return [["S", 0.0, 0.0, 0.0],
            ["H", 0.0, r * math.sin(h), -r * math.cos(h)],
            ["H", 0.0, -r * math.sin(h), -r * math.cos(h)]]


def _ch3():
    r = 1.079
    return [["C", 0.0, 0.0, 0.0],
            ["H", r, 0.0, 0.0],
            ["H", -0.5 * r, r * math.sqrt(3) / 2, 0.0],
            ["H", -0.5 * r, -r * math.sqrt(3) / 2, 0.0]]


def _ch4():
    d = 1.0896 / math.sqrt(3)
    return [["C", 0.0, 0.0, 0.0],
            ["H", d, d, d],
            ["H", -d, -d, d],
            ["H", -d, d, -d],
            ["H", d, -d, -d]]


GEOMS_ANGSTROM = {
    "h2o": [["O", 0.0, 0.0, 0.1173],
            ["H", 0.0, 0.7572, -0.4692],
            ["H", 0.0, -0.7572, -0.4692]],
    "nh3": [["N", 0.0, 0.0, 0.1162],
            ["H", 0.0, 0.9377, -0.2711],
            ["H", 0.8121, -0.4689, -0.2711],
            ["H", -0.8121, -0.4689, -0.2711]],
    "ch4": _ch4(),
    "ch3": _ch3(),
    "oh": [["O", 0.0, 0.0, 0.0], ["H", 0.0, 0.0, 0.9697]],
    "hf": [["F", 0.0, 0.0, 0.0], ["H", 0.0, 0.0, 0.9168]],
    "h2s": _h2s(),
    "hcl": [["Cl", 0.0, 0.0, 0.0], ["H", 0.0, 0.0, 1.2746]],
    "o2": [["O", 0.0, 0.0, 0.0], ["O", 0.0, 0.0, 1.2075]],
    "co": [["C", 0.0, 0.0, 0.0], ["O", 0.0, 0.0, 1.1283]],
    "n2": [["N", 0.0, 0.0, 0.0], ["N", 0.0, 0.0, 1.0977]],
    "benzene": _benzene(),
}

# Geometries given directly in bohr (no conversion at all).
GEOMS_BOHR_EXACT = {
    "h2o_sto3g_ref": [["O", 0.0, -0.143225816552, 0.0],
                      ["H", 1.638036840407, 1.136548822547, 0.0],
                      ["H", -1.638036840407, 1.136548822547, 0.0]],
}


def geometry_bohr(name):
    if name in GEOMS_BOHR_EXACT:
        return [list(a) for a in GEOMS_BOHR_EXACT[name]]
    out = []
    for sym, x, y, z in GEOMS_ANGSTROM[name]:
        out.append([sym] + [round(v * ANGSTROM_TO_BOHR, 10) + 0.0 for v in (x, y, z)])
    return out


def molecule_string(geom_bohr, charge=0, mult=1):
    lines = ["%d %d" % (charge, mult)]
    for sym, x, y, z in geom_bohr:
        lines.append("%s %.12f %.12f %.12f" % (sym, x, y, z))
    lines += ["units bohr", "nocom", "noreorient", "symmetry c1"]
    return "\n".join(lines)


def make_molecule(geom_bohr, charge=0, mult=1, name="mol"):
    mol = psi4.geometry(molecule_string(geom_bohr, charge, mult), name=name)
    mol.update_geometry()
    # sanity: psi4 must hold exactly our coordinates
    g = np.array(mol.geometry().to_array())
    ref = np.array([[a[1], a[2], a[3]] for a in geom_bohr])
    assert np.max(np.abs(g - ref)) < 1e-12, (g, ref)
    return mol


# Settings shared by all exact (non-grid) SCF runs.
SCF_COMMON = {
    "scf_type": "pk",
    "e_convergence": 1e-12,
    "d_convergence": 1e-10,
    "ints_tolerance": 0.0,
    "maxiter": 300,
    "properties_origin": [0.0, 0.0, 0.0],
}

SCF_COMMON_DOC = {
    "scf_type": "pk (conventional 4-index integrals, no density fitting)",
    "e_convergence": 1e-12,
    "d_convergence": 1e-10,
    "ints_tolerance": 0.0,
    "maxiter": 300,
    "guess": "psi4 1.3.2 default AUTO (= SAD for molecules with more than one atom) unless a case records another guess",
    "symmetry": "c1",
    "units": "bohr",
    "nocom": True,
    "noreorient": True,
    "properties_origin_bohr": [0.0, 0.0, 0.0],
}


def reset(outfile):
    psi4.core.clean()
    psi4.core.clean_options()
    psi4.core.clean_variables()
    psi4.set_output_file(os.path.join("/tmp", outfile), False)
    psi4.set_memory("4 GB")


def header(generator):
    return {
        "generator": "testdata/psi4/" + generator,
        "psi4_version": psi4.__version__,
        "psi4_package": "Debian psi4 1:1.3.2+dfsg-5 (python3 %s)" % platform.python_version(),
        "date": datetime.datetime.utcnow().strftime("%Y-%m-%dT%H:%M:%SZ"),
        "machine": "%s, %d cores (os.cpu_count), %s" % (platform.machine(), os.cpu_count(), platform.platform()),
    }


def f17(x):
    """Round-trip float (Python repr is shortest exact round-trip)."""
    return float(x)


def arr(a):
    return [float(v) for v in np.asarray(a).ravel()]


def mat(a):
    return [[float(v) for v in row] for row in np.asarray(a)]


def write_json(name, obj):
    path = os.path.join(HERE, name)
    with open(path, "w") as f:
        json.dump(obj, f, indent=1)
        f.write("\n")
    print("wrote", path)


def spin_squared(wfn):
    """<S^2> of a single-determinant UHF/ROHF wavefunction from psi4's orbitals:
    <S^2> = Sz(Sz+1) + Nb - sum_{i in occ a, j in occ b} |<i_a|j_b>|^2."""
    na, nb = wfn.nalpha(), wfn.nbeta()
    S = np.asarray(wfn.S())
    Ca = np.asarray(wfn.Ca())[:, :na]
    Cb = np.asarray(wfn.Cb())[:, :nb]
    ov = Ca.T @ S @ Cb
    sz = 0.5 * (na - nb)
    return float(sz * (sz + 1) + nb - np.sum(ov * ov))


def nuclear_dipole_au(geom_bohr):
    from_z = {"H": 1, "C": 6, "N": 7, "O": 8, "F": 9, "S": 16, "Cl": 17}
    d = np.zeros(3)
    for sym, x, y, z in geom_bohr:
        d += from_z[sym] * np.array([x, y, z])
    return d


MULTIPOLE_DEFINITION = (
    "All multipoles in atomic units about the origin (0,0,0) of the given bohr frame "
    "(psi4 option properties_origin = [0,0,0]). dipole_au[i] = sum_A Z_A R_A,i - "
    "sum_mn D_mn <m|r_i|n> (e*a0). second_moment_au[ij] (e*a0^2) = sum_A Z_A R_A,i R_A,j - "
    "sum_mn D_mn <m|r_i r_j|n>, the raw (NOT traceless) Cartesian second moment of the total "
    "charge distribution, nuclei included, components ordered xx,xy,xz,yy,yz,zz. This is exactly "
    "what psi4 1.3.2 oeprop stores as 'SCF QUADRUPOLE XX'..'ZZ' (there in Debye*Angstrom; we "
    "converted with psi4's factor dipmom_au2debye*bohr2angstroms and checked it against our own "
    "contraction of psi4's AO integrals, see *_check fields). traceless_quadrupole_au[ij] = "
    "(3/2) * (M_ij - delta_ij * tr(M)/3) (Buckingham convention, e*a0^2). Nuclear parts are given "
    "separately as *_nuclear_au. D is the total (alpha+beta) AO density. psi4 AO multipole integrals "
    "(MintsHelper.ao_dipole / ao_quadrupole) already contain the electron charge -1, i.e. they "
    "are -<m|r_i|n> and -<m|r_i r_j|n>.")


def multipoles(wfn, geom_bohr, prefix="SCF"):
    """Dipole and second moments from psi4's own AO integrals and density, plus
    psi4 oeprop's numbers converted to a.u. for cross-checking."""
    mints = psi4.core.MintsHelper(wfn.basisset())
    D = np.asarray(wfn.Da()) + np.asarray(wfn.Db())
    dip_ints = [np.asarray(m) for m in mints.ao_dipole()]
    quad_ints = [np.asarray(m) for m in mints.ao_quadrupole()]  # xx,xy,xz,yy,yz,zz
    Z = {"H": 1, "C": 6, "N": 7, "O": 8, "F": 9, "S": 16, "Cl": 17}
    R = np.array([[a[1], a[2], a[3]] for a in geom_bohr])
    q = np.array([Z[a[0]] for a in geom_bohr], dtype=float)
    dn = (q[:, None] * R).sum(0)
    de = np.array([np.sum(D * m) for m in dip_ints])
    pairs = [(0, 0), (0, 1), (0, 2), (1, 1), (1, 2), (2, 2)]
    mn = np.array([np.sum(q * R[:, i] * R[:, j]) for i, j in pairs])
    me = np.array([np.sum(D * m) for m in quad_ints])
    M6 = mn + me
    M = np.zeros((3, 3))
    for k, (i, j) in enumerate(pairs):
        M[i, j] = M[j, i] = M6[k]
    T = 1.5 * (M - np.eye(3) * np.trace(M) / 3.0)
    # psi4 oeprop for cross-check
    oe = psi4.core.OEProp(wfn)
    oe.set_title(prefix)
    oe.add("DIPOLE")
    oe.add("QUADRUPOLE")
    oe.compute()
    c_dip = psi4.constants.dipmom_au2debye
    c_quad = psi4.constants.dipmom_au2debye * psi4.constants.bohr2angstroms
    psi_dip = np.array([psi4.variable("%s DIPOLE %s" % (prefix, c)) for c in "XYZ"]) / c_dip
    psi_quad = np.array([psi4.variable("%s QUADRUPOLE %s" % (prefix, c)) for c in
                         ["XX", "XY", "XZ", "YY", "YZ", "ZZ"]]) / c_quad
    assert np.max(np.abs(psi_dip - (dn + de))) < 1e-8, (psi_dip, dn + de)
    assert np.max(np.abs(psi_quad - M6)) < 1e-7, (psi_quad, M6)
    return {
        "dipole_au": arr(dn + de),
        "dipole_nuclear_au": arr(dn),
        "dipole_electronic_au": arr(de),
        "second_moment_au_xx_xy_xz_yy_yz_zz": arr(M6),
        "second_moment_nuclear_au_xx_xy_xz_yy_yz_zz": arr(mn),
        "traceless_quadrupole_au_xx_xy_xz_yy_yz_zz": arr([T[i, j] for i, j in pairs]),
        "psi4_oeprop_dipole_debye_check": arr(psi_dip * c_dip),
        "psi4_oeprop_quadrupole_debye_angstrom_check": arr(psi_quad * c_quad),
    }


TIMING_NOTE = ("The machine (2 cores) is shared with other developers' builds and tests, so wall times are "
               "upper bounds: each timing was repeated, and we give every repetition with its wall time, "
               "the process CPU time (user+sys of all psi4 threads, less sensitive to other load) and the "
               "1-minute load average just before it; use the minimum as the best estimate.")


def timed(fn, repeats):
    """Run fn() `repeats` times; return (last result, list of timing records)."""
    import resource
    recs = []
    res = None
    for _ in range(repeats):
        load = os.getloadavg()[0]
        r0 = resource.getrusage(resource.RUSAGE_SELF)
        t0 = time.time()
        res = fn()
        wall = time.time() - t0
        r1 = resource.getrusage(resource.RUSAGE_SELF)
        cpu = (r1.ru_utime - r0.ru_utime) + (r1.ru_stime - r0.ru_stime)
        recs.append({"wall_seconds": round(wall, 3), "cpu_seconds": round(cpu, 3),
                     "load_average_1min_before": round(load, 2),
                     "date": datetime.datetime.utcnow().strftime("%Y-%m-%dT%H:%M:%SZ")})
    return res, recs


def timing_summary(recs):
    return {"wall_seconds_min": min(r["wall_seconds"] for r in recs),
            "cpu_seconds_min": min(r["cpu_seconds"] for r in recs),
            "repetitions": recs}
