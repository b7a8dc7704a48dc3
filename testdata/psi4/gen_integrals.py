"""Generate testdata/psi4/integrals.json: AO overlap / kinetic / nuclear
attraction matrices, a selection of two-electron integrals, J and K for the
converged RHF density, and the exact shell data psi4 uses, for H2O in 6-31G*
(Cartesian d) and cc-pVDZ (spherical d). Also verifies numerically psi4's
order and sign of functions within a shell for l = 0..4, pure and Cartesian.

Run: cd testdata/psi4 && /usr/bin/python3 gen_integrals.py
"""
import itertools
import math

from scipy.special import lpmv

from common import (SCF_COMMON, SCF_COMMON_DOC, arr, geometry_bohr, header, make_molecule, mat,
                    psi4, reset, write_json, np)

AMCHAR = "spdfghi"


def cart_labels(l):
    """psi4 (libmints) Cartesian order: for i in 0..l: for j in 0..i: x^(l-i) y^(i-j) z^j."""
    out = []
    for i in range(l + 1):
        for j in range(i + 1):
            out.append((l - i, i - j, j))
    return out


def monomial_label(p):
    return "".join("x" * p[0] + "y" * p[1] + "z" * p[2]) or "1"


def moment_1d(n, P, p):
    # int x^n exp(-p (x-P)^2) dx / sqrt(pi/p)
    s = 0.0
    for k in range(n // 2 + 1):
        dfact = 1.0
        for t in range(1, 2 * k, 2):
            dfact *= t
        s += math.comb(n, 2 * k) * P ** (n - 2 * k) * dfact / (2 * p) ** k
    return s


def solid_harmonic(l, m, R):
    """Real solid harmonic without Condon-Shortley phase and without normalisation:
    r^l P_l^|m|(cos t) * (cos(m phi) if m >= 0 else sin(|m| phi))."""
    x, y, z = R
    r = math.sqrt(x * x + y * y + z * z)
    ct = z / r
    phi = math.atan2(y, x)
    am = abs(m)
    plm = lpmv(am, l, ct) * (-1) ** am  # remove scipy's Condon-Shortley phase
    ang = math.cos(am * phi) if m >= 0 else math.sin(am * phi)
    return r ** l * plm * ang


def one_shell_basis(l, pure, alpha, mol, name):
    psi4.basis_helper("%s\n****\nHe 0\n%s 1 1.00\n  %.6f 1.0\n****\n" %
                      ("spherical" if pure else "cartesian", AMCHAR[l].upper(), alpha),
                      name=name, key="BASIS")
    return psi4.core.BasisSet.build(mol, "BASIS", psi4.core.get_global_option("BASIS"))


def verify_order():
    """Overlap of one psi4 shell (single primitive, exponent a, at the origin) with a
    single s primitive (exponent b) at several points R. For a Cartesian component
    x^i y^j z^k the overlap is exp(-ab R^2/p) (pi/p)^1.5 prod_d M_n(P_d) with
    P = bR/p; for a real solid harmonic S_lm it is proportional to
    exp(-ab R^2/p) S_lm(R). The component whose ratio is constant over R is the
    identity of that psi4 function; the sign of the ratio is its phase."""
    reset("gen_integrals_order.out")
    a, b = 0.8, 0.5
    p = a + b
    pts = [(0.3, -0.7, 1.1), (-1.2, 0.4, 0.5), (0.9, 1.3, -0.6), (0.2, 0.1, -1.4), (-0.5, -0.8, -0.3)]
    m1 = psi4.core.Molecule.from_string("He 0 0 0\nunits bohr\nnocom\nnoreorient\nsymmetry c1")
    result = {}
    for pure in (False, True):
        for l in range(0, 5):
            if pure and l == 0:
                continue
            bs1 = one_shell_basis(l, pure, a, m1, "ord_l%d_%s" % (l, pure))
            mints = psi4.core.MintsHelper(bs1)
            self_ov = np.diag(np.asarray(mints.ao_overlap()))
            vals = []
            for R in pts:
                m2 = psi4.core.Molecule.from_string("He %.6f %.6f %.6f\nunits bohr\nnocom\nnoreorient\nsymmetry c1" % R)
                bs2 = one_shell_basis(0, False, b, m2, "ord_s_%d_%s" % (l, pure))
                vals.append(np.asarray(mints.ao_overlap(bs1, bs2))[:, 0])
            vals = np.array(vals)  # npts x nfunc
            if pure:
                cands = [(m, [math.exp(-a * b * sum(c * c for c in R) / p) * solid_harmonic(l, m, R) for R in pts])
                         for m in range(-l, l + 1)]
            else:
                cands = []
                for mono in cart_labels(l):
                    cv = []
                    for R in pts:
                        P = [b * c / p for c in R]
                        cv.append(math.exp(-a * b * sum(c * c for c in R) / p) *
                                  np.prod([moment_1d(mono[d], P[d], p) for d in range(3)]))
                    cands.append((mono, cv))
            ident = []
            for f in range(vals.shape[1]):
                found = None
                for lab, cv in cands:
                    cv = np.array(cv)
                    if np.min(np.abs(cv)) < 1e-8:
                        continue
                    ratio = vals[:, f] / cv
                    if np.max(np.abs(ratio - ratio[0])) < 1e-9 * abs(ratio[0]):
                        found = (lab, float(np.sign(ratio[0])))
                        break
                assert found is not None, (l, pure, f)
                ident.append(found)
            key = "%s_%s" % (AMCHAR[l], "pure" if pure else "cartesian")
            if pure:
                result[key] = {
                    "m_order": [lab for lab, _ in ident],
                    "sign_relative_to_unnormalised_real_solid_harmonic": [s for _, s in ident],
                    "self_overlap_diagonal": arr(self_ov),
                }
            else:
                assert [lab for lab, _ in ident] == cart_labels(l)
                result[key] = {
                    "component_order": [monomial_label(lab) for lab, _ in ident],
                    "sign": [s for _, s in ident],
                    "self_overlap_diagonal": arr(self_ov),
                }
            print(key, [lab for lab, _ in ident], [s for _, s in ident])
    return result


def shells_of(bs):
    shells = []
    for i in range(bs.nshell()):
        sh = bs.shell(i)
        shells.append({
            "index": i,
            "atom_index": sh.ncenter,
            "l": sh.am,
            "pure": bool(sh.is_pure()),
            "n_functions": sh.nfunction,
            "first_function_index": sh.function_index,
            "n_primitives": sh.nprimitive,
            "exponents": [sh.exp(k) for k in range(sh.nprimitive)],
            "coefficients_as_in_basis_file": [sh.original_coef(k) for k in range(sh.nprimitive)],
            "coefficients_as_used": [sh.coef(k) for k in range(sh.nprimitive)],
        })
    return shells


def eri_selection(eri, nbf, shells, rng):
    lof = {}
    for sh in shells:
        for k in range(sh["n_functions"]):
            lof[sh["first_function_index"] + k] = sh["l"]
    dfun = [f for f in range(nbf) if lof[f] == 2]
    pfun = [f for f in range(nbf) if lof[f] == 1]
    sel = set()
    # fixed structured picks
    sel.add((0, 0, 0, 0))
    sel.add((nbf - 1, nbf - 1, nbf - 1, nbf - 1))
    for f in dfun[:3]:
        sel.add((f, f, f, f))
        sel.add((f, f, 0, 0))
        sel.add((0, f, 0, f))
    if len(dfun) >= 2:
        sel.add((dfun[0], dfun[1], dfun[0], dfun[1]))
        sel.add((dfun[0], dfun[-1], pfun[0], pfun[-1]))
    # random picks: 20 with at least one d function, 25 general
    while len([q for q in sel if any(lof[i] == 2 for i in q)]) < 25:
        q = (int(rng.choice(dfun)), int(rng.integers(nbf)), int(rng.integers(nbf)), int(rng.integers(nbf)))
        sel.add(q)
    target = len(sel) + 25
    while len(sel) < target:
        sel.add(tuple(int(v) for v in rng.integers(nbf, size=4)))
    out = []
    for (i, j, k, l) in sorted(sel):
        out.append({"mu": i, "nu": j, "lambda": k, "sigma": l,
                    "l_of_indices": [lof[i], lof[j], lof[k], lof[l]],
                    "value": float(eri[i, j, k, l])})
    return out


def integrals_case(name, basis, puream, rng):
    reset("gen_integrals_%s.out" % name)
    geom = geometry_bohr("h2o")
    mol = make_molecule(geom, 0, 1, name)
    opts = dict(SCF_COMMON)
    opts.update({"basis": basis, "puream": puream, "reference": "rhf"})
    psi4.set_options(opts)
    e, wfn = psi4.energy("scf", molecule=mol, return_wfn=True)
    bs = wfn.basisset()
    mints = psi4.core.MintsHelper(bs)
    nbf = bs.nbf()
    S = np.asarray(mints.ao_overlap())
    T = np.asarray(mints.ao_kinetic())
    V = np.asarray(mints.ao_potential())
    eri = np.asarray(mints.ao_eri()).reshape(nbf, nbf, nbf, nbf)
    D = np.asarray(wfn.Da())  # alpha density = half the total RHF density
    J = np.einsum("pqrs,rs->pq", eri, D)
    K = np.einsum("prqs,rs->pq", eri, D)
    # consistency with psi4's SCF: E = Enuc + 2 tr(D H) + tr(D (2J - K))
    H = T + V
    e_chk = mol.nuclear_repulsion_energy() + 2 * np.sum(D * H) + np.sum(D * (2 * J - K))
    assert abs(e_chk - e) < 1e-9, (e_chk, e)
    shells = shells_of(bs)
    # unique-quartet norm of the whole tensor as a global check
    return {
        "name": name,
        "geometry_bohr": geom,
        "charge": 0,
        "multiplicity": 1,
        "basis": basis,
        "puream": puream,
        "n_basis_functions": nbf,
        "n_shells": bs.nshell(),
        "shells": shells,
        "function_labels": function_labels(shells),
        "nuclear_repulsion_hartree": float(mol.nuclear_repulsion_energy()),
        "overlap": mat(S),
        "kinetic": mat(T),
        "potential": mat(V),
        "eri_selected": eri_selection(eri, nbf, shells, rng),
        "eri_sum_of_squares_full_tensor": float(np.sum(eri * eri)),
        "eri_sum_full_tensor": float(np.sum(eri)),
        "rhf_energy_total_hartree": float(e),
        "rhf_alpha_density": mat(D),
        "coulomb_J_of_alpha_density": mat(J),
        "exchange_K_of_alpha_density": mat(K),
    }


def function_labels(shells):
    labs = []
    pure_names = {1: ["p0(z)", "p+1(x)", "p-1(y)"]}
    for sh in shells:
        l = sh["l"]
        if sh["pure"] and l >= 1:
            ms = [0]
            for m in range(1, l + 1):
                ms += [m, -m]
            names = ["%s%+d" % (AMCHAR[l], m) if m else "%s0" % AMCHAR[l] for m in ms]
        else:
            names = [AMCHAR[l] + monomial_label(c) if l else "s" for c in cart_labels(l)]
        for n in names:
            labs.append("atom%d:%s" % (sh["atom_index"], n))
    return labs


def main():
    psi4.set_num_threads(1)
    order = verify_order()
    rng = np.random.default_rng(20261202)
    cases = [
        integrals_case("h2o_631gs_cartesian", "6-31g*", False, rng),
        integrals_case("h2o_ccpvdz_spherical", "cc-pvdz", True, rng),
    ]
    doc = header("gen_integrals.py")
    common = dict(SCF_COMMON_DOC)
    common.update({
        "integral_source": "psi4.core.MintsHelper(wfn.basisset()): ao_overlap, ao_kinetic, ao_potential, ao_eri",
        "potential_definition": "V_mn = sum_A <m| -Z_A/|r-R_A| |n> (all nuclei, negative definite)",
        "eri_notation": "chemists' notation (mu nu|lambda sigma) = int m(1) n(1) r12^-1 l(2) s(2); indices 0-based into the AO list",
        "jk_definition": "D = psi4 wfn.Da() (alpha density, = half the total RHF density, AO basis); J_pq = sum_rs (pq|rs) D_rs; K_pq = sum_rs (pr|qs) D_rs; E_RHF = E_nuc + 2 tr(D(T+V)) + tr(D(2J-K)) checked to 1e-9",
        "function_order_within_shell": {
            "cartesian": "psi4 libmints order: for i in 0..l, for j in 0..i: x^(l-i) y^(i-j) z^j. d: xx,xy,xz,yy,yz,zz; f: xxx,xxy,xxz,xyy,xyz,xzz,yyy,yyz,yzz,zzz; all components positive",
            "pure": "m = 0, +1, -1, +2, -2, ..., +l, -l where +m ~ r^l P_l^m(cos t) cos(m phi) and -m ~ r^l P_l^|m|(cos t) sin(|m| phi) (no Condon-Shortley phase). Pure p is therefore ordered z, x, y. Signs: see numerical_verification",
            "cartesian_normalisation": "each shell is normalised so that the x^l component (xx, xxx, ...) has unit self-overlap; other components share the same radial/contraction normalisation factor, so e.g. a Cartesian xy function has self-overlap 1/3 and xxy 1/5 (see numerical_verification self_overlap_diagonal and the overlap matrix diagonal)",
            "coefficients_as_used": "GaussianShell.coef(k): psi4's contraction coefficient including the primitive normalisation and the contraction renormalisation; coefficients_as_in_basis_file = GaussianShell.original_coef(k) as read from the .gbs file. A function is sum_k coef_k * x^a y^b z^c exp(-exp_k r^2) (Cartesian) or the solid-harmonic combination of those",
        },
        "numerical_verification": {
            "method": "overlap of a single-primitive shell (exponent 0.8, at the origin) with an s primitive (exponent 0.5) at 5 points; each psi4 function matched the unique candidate whose ratio to psi4's integral is constant to 1e-9 (relative) over the points; see verify_order() in the generator",
            "results": order,
        },
    })
    doc["common_settings"] = common
    doc["cases"] = cases
    write_json("integrals.json", doc)


if __name__ == "__main__":
    main()
