// Package cc computes closed-shell coupled-cluster energies on a
// converged RHF reference: CCSD and the perturbative triples correction
// (T), with an optional frozen core.
//
// Equations. Spin-adapted CCSD in spatial orbitals (i j k l occupied
// active, a b c d virtual, chemists' notation (pq|rs), canonical orbitals
// so the Fock matrix is diagonal): amplitudes t_i^a and t_ij^ab = t_ji^ba,
// τ_ij^ab = t_ij^ab + t_i^a t_j^b, energy
//
//	E = Σ_ijab [2(ia|jb) − (ib|ja)] τ_ij^ab,
//
// and the T1/T2 residuals in the usual intermediates F_ki, F_ac, F_kc,
// L_ki, L_ac, W_klij, W_abcd, W_akic, W_akci of the closed-shell
// factorisation (G. E. Scuseria, A. C. Scheiner, T. J. Lee, J. E. Rice and
// H. F. Schaefer, J. Chem. Phys. 86, 2881 (1987); the intermediate form of
// J. F. Stanton, J. Gauss, J. D. Watts and R. J. Bartlett, J. Chem. Phys.
// 94, 4334 (1991), spin-adapted), each evaluated as dense matrix products
// after reordering the tensors (ccsd.go). W_abcd is never formed: the
// ladder Σ_cd (ac|bd) τ_ij^cd is one product with (ac|bd) held as a
// [ab][cd] matrix, and its t1 parts go through Y_ij,ka = Σ_cd (kd|ac) τ_ij^cd
// (o³v³). The equations are iterated by Jacobi steps with DIIS on the
// amplitudes; the iteration starts from the first-order amplitudes, whose
// energy is MP2.
//
// (T) (K. Raghavachari, G. W. Trucks, J. A. Pople and M. Head-Gordon, Chem.
// Phys. Lett. 157, 479 (1989); closed-shell form as in A. P. Rendell, T. J.
// Lee and A. Komornicki, Chem. Phys. Lett. 178, 462 (1991)): for each
// occupied triple i ≥ j ≥ k,
//
//	W_abc = P [Σ_f (ia|bf) t_kj^cf − Σ_m (ia|jm) t_mk^bc]
//	V_abc = (ia|jb) t_k^c + (ia|kc) t_j^b + (jb|kc) t_i^a
//	E(T)  = ⅓ Σ_ijk Σ_abc W_abc (4Z_abc + Z_bca + Z_cab − 2Z_cba − 2Z_acb − 2Z_bac) / D_ijk^abc,
//
// Z = W + V, P the sum over the six simultaneous permutations of the
// pairs (ia), (jb), (kc), D = ε_i + ε_j + ε_k − ε_a − ε_b − ε_c; the sum
// over all ijk is the sum over i ≥ j ≥ k weighted by the number of
// distinct orderings. Cost 2 o³ v⁴ for W.
//
// Integrals. The amplitude code sees the integrals only through Source
// (blocks of (pq|rs) over the active orbitals). Exact is the four-index
// transformation of the exact AO integrals (n²(n+1)²/4 values); Factored
// forms blocks from three-index factors B[Q][pq], so fitted integrals
// (Q|pq) contracted with the inverse square root of the fitting metric
// slot in by handing their factors to NewFactored — nothing else changes.
// The blocks are fetched once: (ov|ov), (oo|vv), (ov|oo), (oo|oo),
// (ov|vv) and (vv|vv), the last held as one v⁴ array.
//
// Memory: the Exact source plus about v⁴ + 3 o v³ + 12 o² v² doubles
// (water/aug-cc-pVTZ, v = 87: about 1.2 GB; benzene/cc-pVDZ with frozen
// core, v = 93: about 1.5 GB).
//
// Determinism: every element is computed by one fixed sequence of
// operations, (T) sums the per-triple energies in triple order, so the
// bits do not depend on the number of threads.
package cc
