package dft

import "math"

// grad is the derivative part of a dual number: with respect to (ρ, σ) for
// unpolarised kernels, or (ρα, ρβ, σαα, σαβ, σββ) for polarised ones. Two
// array lengths keep the unpolarised arithmetic at two derivatives.
type grad interface{ ~[2]float64 | ~[5]float64 }

// dual is a forward-mode automatic-differentiation number: a value and its
// partial derivatives with respect to the kernel variables.
type dual[G grad] struct {
	v float64
	d G
}

func konst[G grad](x float64) dual[G] { return dual[G]{v: x} }

func add[G grad](a, b dual[G]) dual[G] {
	r := dual[G]{v: a.v + b.v}
	for i := range len(r.d) {
		r.d[i] = a.d[i] + b.d[i]
	}
	return r
}

func sub[G grad](a, b dual[G]) dual[G] {
	r := dual[G]{v: a.v - b.v}
	for i := range len(r.d) {
		r.d[i] = a.d[i] - b.d[i]
	}
	return r
}

func mul[G grad](a, b dual[G]) dual[G] {
	r := dual[G]{v: a.v * b.v}
	for i := range len(r.d) {
		r.d[i] = a.d[i]*b.v + a.v*b.d[i]
	}
	return r
}

func div[G grad](a, b dual[G]) dual[G] {
	q := a.v / b.v
	r := dual[G]{v: q}
	for i := range len(r.d) {
		r.d[i] = (a.d[i] - q*b.d[i]) / b.v
	}
	return r
}

// scale returns c·a.
func scale[G grad](c float64, a dual[G]) dual[G] {
	r := dual[G]{v: c * a.v}
	for i := range len(r.d) {
		r.d[i] = c * a.d[i]
	}
	return r
}

// addc returns a + c.
func addc[G grad](a dual[G], c float64) dual[G] {
	a.v += c
	return a
}

// chain applies a function of value f and derivative df to a.
func chain[G grad](a dual[G], f, df float64) dual[G] {
	r := dual[G]{v: f}
	for i := range len(r.d) {
		r.d[i] = df * a.d[i]
	}
	return r
}

// pow returns a^p for a constant exponent p (a > 0, or a = 0 with p > 1).
func pow[G grad](a dual[G], p float64) dual[G] {
	if a.v == 0 && p > 1 {
		return dual[G]{}
	}
	var f float64
	switch p {
	// the exponents the kernels use, through Cbrt (much cheaper than Pow)
	case 1.0 / 3:
		f = math.Cbrt(a.v)
	case -1.0 / 3:
		f = 1 / math.Cbrt(a.v)
	case 2.0 / 3:
		c := math.Cbrt(a.v)
		f = c * c
	case 4.0 / 3:
		f = a.v * math.Cbrt(a.v)
	case 8.0 / 3:
		c := math.Cbrt(a.v)
		f = a.v * a.v * c * c
	case -5.0 / 3:
		c := math.Cbrt(a.v)
		f = 1 / (a.v * c * c)
	case -11.0 / 3:
		c := math.Cbrt(a.v)
		f = 1 / (a.v * a.v * a.v * c * c)
	case -1:
		f = 1 / a.v
	default:
		f = math.Pow(a.v, p)
	}
	return chain(a, f, p*f/a.v)
}

func cbrt[G grad](a dual[G]) dual[G] {
	f := math.Cbrt(a.v)
	return chain(a, f, f/(3*a.v))
}

func sqrt[G grad](a dual[G]) dual[G] {
	f := math.Sqrt(a.v)
	return chain(a, f, 0.5/f)
}

func log[G grad](a dual[G]) dual[G] { return chain(a, math.Log(a.v), 1/a.v) }

// log1p returns ln(1+a).
func log1p[G grad](a dual[G]) dual[G] { return chain(a, math.Log1p(a.v), 1/(1+a.v)) }

func exp[G grad](a dual[G]) dual[G] {
	f := math.Exp(a.v)
	return chain(a, f, f)
}

func atan[G grad](a dual[G]) dual[G] { return chain(a, math.Atan(a.v), 1/(1+a.v*a.v)) }

func asinh[G grad](a dual[G]) dual[G] { return chain(a, math.Asinh(a.v), 1/math.Sqrt(1+a.v*a.v)) }

func sq[G grad](a dual[G]) dual[G] { return mul(a, a) }
