// Package dft is moltrail's Kohn–Sham exchange–correlation machinery:
// atom-centred molecular integration grids (radial × angular quadrature,
// Becke partitioning with atomic size adjustment, optional pruning, spatial
// batching), basis functions and their gradients on the grid, the
// exchange–correlation functionals (Slater, VWN5, VWN-RPA, Becke 88, LYP,
// PBE exchange and correlation, and the hybrids B3LYP, B3LYP5, PBE0), and
// the XC energy and Fock-matrix contribution for restricted and
// unrestricted densities.
//
// Functional kernels work in the variables of the libxc convention:
// unpolarised (ρ, σ = |∇ρ|²) and spin-polarised (ρα, ρβ, σαα = ∇ρα·∇ρα,
// σαβ = ∇ρα·∇ρβ, σββ). Every kernel is written once as an energy density
// per volume in the spin-polarised variables; first derivatives come from
// forward-mode automatic differentiation (exact to rounding, no
// hand-derived formulas to get wrong), and the unpolarised kernel is the
// polarised one at ρα = ρβ = ρ/2 with the chain rule applied through the
// seeds.
//
// Per batch of grid points, the density Φ·D and the potential Φᵀ·Z are
// register-blocked matrix products (gemm.go: AVX2/FMA or AVX-512 assembly
// on amd64, a Go loop elsewhere) on zero-padded arrays, and basis values
// are kept between SCF iterations up to a memory budget.
//
// Everything is in atomic units. Results are bit-identical for any thread
// count: work is divided into a fixed set of chunks whose partial sums are
// added in a fixed order.
package dft
