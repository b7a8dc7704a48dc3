package dft

import "math"

// spinVars are the kernel variables of one grid point as dual numbers.
type spinVars[G grad] struct {
	ra, rb, saa, sab, sbb dual[G]
}

// Guards. Densities at or below rhoFloor carry no energy; a spin channel
// below spinFloor is dropped from the exchange terms that divide by it, and
// the relative spin polarisation is kept inside ±(1 − zetaEdge) so that
// (1 ± ζ)^{1/3} stays differentiable. These only touch points whose
// contribution is far below any printed digit.
const (
	rhoFloor  = 1e-20
	spinFloor = 1e-20
	zetaEdge  = 1e-12
)

var (
	cbrt2   = math.Cbrt(2)
	pi2     = math.Pi * math.Pi
	rsCoeff = math.Cbrt(3 / (4 * math.Pi)) // rs = rsCoeff · ρ^{-1/3}
)

// total returns ρ, and ζ clamped away from ±1.
func total[G grad](v *spinVars[G]) (rho, zeta dual[G]) {
	rho = add(v.ra, v.rb)
	zeta = div(sub(v.ra, v.rb), rho)
	if zeta.v > 1-zetaEdge {
		zeta = konst[G](1 - zetaEdge)
	} else if zeta.v < -1+zetaEdge {
		zeta = konst[G](-1 + zetaEdge)
	}
	return rho, zeta
}

// fzeta is the spin-interpolation function
// f(ζ) = ((1+ζ)^{4/3} + (1−ζ)^{4/3} − 2)/(2^{4/3} − 2).
func fzeta[G grad](z dual[G]) dual[G] {
	a := pow(addc(z, 1), 4.0/3)
	b := pow(addc(scale(-1, z), 1), 4.0/3)
	return scale(1/(2*cbrt2-2), addc(add(a, b), -2))
}

// ---------------------------------------------------------------- Slater

// slaterX is the exchange of the uniform electron gas (Dirac 1930; Slater
// 1951 with α = 2/3): e = −(3/4)(6/π)^{1/3} Σσ ρσ^{4/3}.
func slaterX[G grad](v *spinVars[G]) dual[G] {
	c := -0.75 * math.Cbrt(6/math.Pi)
	if v.ra == v.rb { // identical channels (unpolarised evaluation)
		return scale(2*c, pow(v.ra, 4.0/3))
	}
	e := konst[G](0)
	if v.ra.v > spinFloor {
		e = add(e, scale(c, pow(v.ra, 4.0/3)))
	}
	if v.rb.v > spinFloor {
		e = add(e, scale(c, pow(v.rb, 4.0/3)))
	}
	return e
}

// ---------------------------------------------------------------- VWN

// vwnParams are the four fit parameters of one VWN Padé form.
type vwnParams struct{ A, b, c, x0 float64 }

// Parameters of S. H. Vosko, L. Wilk, M. Nusair, Can. J. Phys. 58, 1200
// (1980), in hartree: paramagnetic, ferromagnetic and spin stiffness, for
// the fit to Ceperley–Alder (their "V", used by VWN5) and to the RPA
// correlation energies (their "III"-type RPA fit, used by VWN-RPA).
var (
	vwn5Para  = vwnParams{0.0310907, 3.72744, 12.9352, -0.10498}
	vwn5Ferro = vwnParams{0.01554535, 7.06042, 18.0578, -0.32500}
	vwn5Stiff = vwnParams{-1 / (6 * pi2), 1.13107, 13.0045, -0.0047584}
	rpaPara   = vwnParams{0.0310907, 13.0720, 42.7198, -0.409286}
	rpaFerro  = vwnParams{0.01554535, 20.1231, 101.578, -0.743294}
)

// vwnForm is the VWN interpolation formula (their eq. 4.4) at x = √rs.
func vwnForm[G grad](p vwnParams, x dual[G]) dual[G] {
	Q := math.Sqrt(4*p.c - p.b*p.b)
	X := addc(add(sq(x), scale(p.b, x)), p.c)
	X0 := p.x0*p.x0 + p.b*p.x0 + p.c
	f1 := 2 * p.b / Q
	f2 := p.b * p.x0 / X0
	f3 := 2 * (2*p.x0 + p.b) / Q
	t1 := log(div(sq(x), X))
	t2 := scale(f1-f2*f3, atan(div(konst[G](Q), addc(scale(2, x), p.b))))
	t3 := scale(-f2, log(div(sq(addc(x, -p.x0)), X)))
	return scale(p.A, add(add(t1, t2), t3))
}

func rsOf[G grad](rho dual[G]) dual[G] { return scale(rsCoeff, pow(rho, -1.0/3)) }

// vwn5C is VWN correlation with the Ceperley–Alder fit ("VWN5") and VWN's
// spin interpolation through the spin stiffness:
// ε = εP + αc f(ζ)/f”(0) (1−ζ⁴) + (εF − εP) f(ζ) ζ⁴.
func vwn5C[G grad](v *spinVars[G]) dual[G] {
	rho, z := total(v)
	x := sqrt(rsOf(rho))
	P := vwnForm(vwn5Para, x)
	if z.v == 0 {
		// f(0) = f'(0) = 0 and ζ⁴ has no first derivative at 0: only εP
		// contributes to the energy and its first derivatives
		return mul(rho, P)
	}
	F := vwnForm(vwn5Ferro, x)
	S := vwnForm(vwn5Stiff, x)
	fz := fzeta(z)
	z4 := sq(sq(z))
	fpp := 4 / (9 * (cbrt2 - 1))
	eps := add(P, add(mul(sub(F, P), mul(fz, z4)), scale(1/fpp, mul(S, mul(fz, addc(scale(-1, z4), 1))))))
	return mul(rho, eps)
}

// vwnRPAC is VWN correlation with the RPA fit and the plain f(ζ)
// interpolation between the para- and ferromagnetic limits,
// ε = εP (1 − f(ζ)) + εF f(ζ), the form libxc's LDA_C_VWN_RPA (and so its
// B3LYP) uses.
func vwnRPAC[G grad](v *spinVars[G]) dual[G] {
	rho, z := total(v)
	x := sqrt(rsOf(rho))
	P := vwnForm(rpaPara, x)
	if z.v == 0 { // see vwn5C
		return mul(rho, P)
	}
	F := vwnForm(rpaFerro, x)
	fz := fzeta(z)
	return mul(rho, add(P, mul(sub(F, P), fz)))
}

// ---------------------------------------------------------------- PW92

// pw92Params are one channel of J. P. Perdew, Y. Wang, Phys. Rev. B 45,
// 13244 (1992), Table I, with libxc's more precise A and f”(0) (its
// LDA_C_PW_MOD, the local part of its PBE correlation).
type pw92Params struct{ A, a1, b1, b2, b3, b4 float64 }

var (
	pwPara  = pw92Params{0.0310907, 0.21370, 7.5957, 3.5876, 1.6382, 0.49294}
	pwFerro = pw92Params{0.01554535, 0.20548, 14.1189, 6.1977, 3.3662, 0.62517}
	pwAlpha = pw92Params{0.0168869, 0.11125, 10.357, 3.6231, 0.88026, 0.49671}
	pwFpp0  = 1.709920934161365617563962776245
)

// pwG is PW92 eq. 10: G = −2A(1+α1 rs) ln(1 + 1/(2A(β1 rs^{1/2} + β2 rs + β3 rs^{3/2} + β4 rs²))).
func pwG[G grad](p pw92Params, rs, x dual[G]) dual[G] {
	den := add(add(scale(p.b1, x), scale(p.b2, rs)), add(scale(p.b3, mul(rs, x)), scale(p.b4, sq(rs))))
	l := log1p(div(konst[G](1/(2*p.A)), den))
	return mul(scale(-2*p.A, addc(scale(p.a1, rs), 1)), l)
}

// pw92Eps is the PW92 correlation energy per electron at (rs, ζ).
func pw92Eps[G grad](rs, z dual[G]) dual[G] {
	x := sqrt(rs)
	gP := pwG(pwPara, rs, x)
	if z.v == 0 { // f(0) = f'(0) = 0, as in vwn5C
		return gP
	}
	gF := pwG(pwFerro, rs, x)
	gA := pwG(pwAlpha, rs, x) // = −αc
	fz := fzeta(z)
	z4 := sq(sq(z))
	t := mul(mul(z4, fz), add(sub(gF, gP), scale(1/pwFpp0, gA)))
	return sub(add(gP, t), scale(1/pwFpp0, mul(fz, gA)))
}

// ---------------------------------------------------------------- B88

// b88Beta is β of A. D. Becke, Phys. Rev. A 38, 3098 (1988).
const b88Beta = 0.0042

// xAsinhX returns g(s) = √s·asinh(√s) as a function of s = x², smooth at 0.
func xAsinhX[G grad](s dual[G]) dual[G] {
	if s.v < 1e-8 {
		// asinh(x)/x = 1 − x²/6 + 3x⁴/40 − …
		return mul(s, addc(scale(-1.0/6, s), 1))
	}
	x := math.Sqrt(s.v)
	ash := math.Asinh(x)
	return chain(s, x*ash, 0.5*(ash/x+1/math.Sqrt(1+s.v)))
}

// b88X is Becke 88 exchange, eq. 8 of Becke 1988 per spin channel:
// eσ = eσ^LDA − β ρσ^{4/3} xσ² / (1 + 6β xσ asinh xσ), xσ = |∇ρσ|/ρσ^{4/3}.
func b88X[G grad](v *spinVars[G]) dual[G] {
	c := -0.75 * math.Cbrt(6/math.Pi)
	e := konst[G](0)
	chans := [2][2]dual[G]{{v.ra, v.saa}, {v.rb, v.sbb}}
	n := 2
	if chans[0] == chans[1] { // identical channels (unpolarised evaluation)
		n = 1
	}
	for _, ch := range chans[:n] {
		r, s := ch[0], ch[1]
		if r.v <= spinFloor {
			continue
		}
		r43 := pow(r, 4.0/3)
		x2 := div(s, sq(r43))
		g := div(scale(b88Beta, x2), addc(scale(6*b88Beta, xAsinhX(x2)), 1))
		e = add(e, mul(r43, addc(scale(-1, g), c)))
	}
	if n == 1 {
		e = scale(2, e)
	}
	return e
}

// ---------------------------------------------------------------- LYP

// lypC is the correlation of C. Lee, W. Yang, R. G. Parr, Phys. Rev. B 37,
// 785 (1988), in the form without Laplacians given by B. Miehlich, A.
// Savin, H. Stoll, H. Preuss, Chem. Phys. Lett. 157, 200 (1989), eq. 2.
func lypC[G grad](v *spinVars[G]) dual[G] {
	const a, b, c, d = 0.04918, 0.132, 0.2533, 0.349
	cf := 0.3 * math.Pow(3*pi2, 2.0/3)
	rho := add(v.ra, v.rb)
	rm13 := pow(rho, -1.0/3)
	den := addc(scale(d, rm13), 1) // 1 + dρ^{-1/3}
	delta := add(scale(c, rm13), div(scale(d, rm13), den))
	if v.ra == v.rb && v.saa == v.sab && v.sab == v.sbb {
		// closed shell (ρα = ρβ = ρ/2, all σ = |∇ρ|²/4): the same formula
		// reduces to −aρ/(1+dρ^{-1/3}) − ab ωρ² [C_F ρ^{8/3} − (3+7δ)σ/72]
		sig := scale(4, v.saa)
		wr2 := div(mul(exp(scale(-c, rm13)), pow(rho, -5.0/3)), den) // ωρ²
		br := sub(scale(cf, pow(rho, 8.0/3)), scale(1.0/72, mul(addc(scale(7, delta), 3), sig)))
		return sub(scale(-a, div(rho, den)), scale(a*b, mul(wr2, br)))
	}
	omega := div(mul(exp(scale(-c, rm13)), pow(rho, -11.0/3)), den)
	rab := mul(v.ra, v.rb)
	sig := add(add(v.saa, v.sbb), scale(2, v.sab)) // |∇ρ|²
	sab2 := add(v.saa, v.sbb)
	// bracket multiplying ρα ρβ
	t1 := scale(math.Pow(2, 11.0/3)*cf, add(pow(v.ra, 8.0/3), pow(v.rb, 8.0/3)))
	t2 := mul(addc(scale(-7.0/18, delta), 47.0/18), sig)
	t3 := scale(-1, mul(addc(scale(-1.0/18, delta), 2.5), sab2))
	t4 := scale(-1.0/9, mul(addc(delta, -11), div(add(mul(v.ra, v.saa), mul(v.rb, v.sbb)), rho)))
	br := add(add(t1, t2), add(t3, t4))
	rho2 := sq(rho)
	rest := add(scale(-2.0/3, mul(rho2, sig)),
		add(mul(sub(scale(2.0/3, rho2), sq(v.ra)), v.sbb), mul(sub(scale(2.0/3, rho2), sq(v.rb)), v.saa)))
	e1 := scale(-4*a, div(div(rab, rho), den))
	e2 := scale(-a*b, mul(omega, add(mul(rab, br), rest)))
	return add(e1, e2)
}

// ---------------------------------------------------------------- PBE

// PBE constants: J. P. Perdew, K. Burke, M. Ernzerhof, Phys. Rev. Lett. 77,
// 3865 (1996); β with the digits libxc uses, μ = βπ²/3, κ = 0.804.
const (
	pbeKappa = 0.804
	pbeBeta  = 0.06672455060314922
)

var (
	pbeMu    = pbeBeta * pi2 / 3
	pbeGamma = (1 - math.Ln2) / pi2
)

// pbeXUnpol is PBE exchange of a spin-unpolarised density ρ with gradient
// squared σ: e = e^LDA(ρ) F(s), F = 1 + κ − κ/(1 + μs²/κ), PBE eq. 14.
func pbeXUnpol[G grad](rho, sigma dual[G]) dual[G] {
	c := -0.75 * math.Cbrt(3/math.Pi)
	r43 := pow(rho, 4.0/3)
	s2 := scale(1/(4*math.Pow(3*pi2, 2.0/3)), div(sigma, sq(r43)))
	F := addc(scale(-pbeKappa, pow(addc(scale(pbeMu/pbeKappa, s2), 1), -1)), 1+pbeKappa)
	return scale(c, mul(r43, F))
}

// pbeX uses the exact spin scaling Ex[ρα,ρβ] = ½(Ex[2ρα] + Ex[2ρβ]).
func pbeX[G grad](v *spinVars[G]) dual[G] {
	if v.ra == v.rb && v.saa == v.sbb && v.ra.v > spinFloor {
		return pbeXUnpol(scale(2, v.ra), scale(4, v.saa))
	}
	e := konst[G](0)
	if v.ra.v > spinFloor {
		e = add(e, scale(0.5, pbeXUnpol(scale(2, v.ra), scale(4, v.saa))))
	}
	if v.rb.v > spinFloor {
		e = add(e, scale(0.5, pbeXUnpol(scale(2, v.rb), scale(4, v.sbb))))
	}
	return e
}

func expm1[G grad](a dual[G]) dual[G] { return chain(a, math.Expm1(a.v), math.Exp(a.v)) }

// pbeC is PBE correlation, PBE eqs. 3, 7, 8: e = ρ (ε^PW92(rs,ζ) + H(rs,ζ,t)).
func pbeC[G grad](v *spinVars[G]) dual[G] {
	rho, z := total(v)
	rs := rsOf(rho)
	eps := pw92Eps(rs, z)
	phi := konst[G](1) // φ(0) = 1, φ'(0) = 0
	if z.v != 0 {
		phi = scale(0.5, add(pow(addc(z, 1), 2.0/3), pow(addc(scale(-1, z), 1), 2.0/3)))
	}
	phi3 := mul(phi, sq(phi))
	kf := cbrt(scale(3*pi2, rho))
	ks2 := scale(4/math.Pi, kf) // k_s²
	sig := add(add(v.saa, v.sbb), scale(2, v.sab))
	t2 := div(sig, mul(scale(4, mul(sq(phi), ks2)), sq(rho)))
	A := div(konst[G](pbeBeta/pbeGamma), expm1(div(scale(-1/pbeGamma, eps), phi3)))
	At2 := mul(A, t2)
	frac := div(mul(t2, addc(At2, 1)), addc(add(At2, sq(At2)), 1))
	H := mul(scale(pbeGamma, phi3), log1p(scale(pbeBeta/pbeGamma, frac)))
	return mul(rho, add(eps, H))
}
