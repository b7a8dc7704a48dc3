package dft

import "math"

// nvar is the number of independent variables carried by a dual number:
// ρα, ρβ, σαα, σαβ, σββ.
const nvar = 5

// dual is a forward-mode automatic-differentiation number: a value and its
// partial derivatives with respect to the nvar kernel variables.
type dual struct {
	v float64
	d [nvar]float64
}

func konst(x float64) dual { return dual{v: x} }

func add(a, b dual) dual {
	r := dual{v: a.v + b.v}
	for i := range r.d {
		r.d[i] = a.d[i] + b.d[i]
	}
	return r
}

func sub(a, b dual) dual {
	r := dual{v: a.v - b.v}
	for i := range r.d {
		r.d[i] = a.d[i] - b.d[i]
	}
	return r
}

func mul(a, b dual) dual {
	r := dual{v: a.v * b.v}
	for i := range r.d {
		r.d[i] = a.d[i]*b.v + a.v*b.d[i]
	}
	return r
}

func div(a, b dual) dual {
	q := a.v / b.v
	r := dual{v: q}
	for i := range r.d {
		r.d[i] = (a.d[i] - q*b.d[i]) / b.v
	}
	return r
}

// scale returns c·a.
func scale(c float64, a dual) dual {
	r := dual{v: c * a.v}
	for i := range r.d {
		r.d[i] = c * a.d[i]
	}
	return r
}

// addc returns a + c.
func addc(a dual, c float64) dual {
	a.v += c
	return a
}

// chain applies a function of value f and derivative df to a.
func chain(a dual, f, df float64) dual {
	r := dual{v: f}
	for i := range r.d {
		r.d[i] = df * a.d[i]
	}
	return r
}

// pow returns a^p for a constant exponent p (a > 0, or a = 0 with p > 1).
func pow(a dual, p float64) dual {
	if a.v == 0 && p > 1 {
		return dual{}
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

func cbrt(a dual) dual {
	f := math.Cbrt(a.v)
	return chain(a, f, f/(3*a.v))
}

func sqrt(a dual) dual {
	f := math.Sqrt(a.v)
	return chain(a, f, 0.5/f)
}

func log(a dual) dual { return chain(a, math.Log(a.v), 1/a.v) }

// log1p returns ln(1+a).
func log1p(a dual) dual { return chain(a, math.Log1p(a.v), 1/(1+a.v)) }

func exp(a dual) dual {
	f := math.Exp(a.v)
	return chain(a, f, f)
}

func atan(a dual) dual { return chain(a, math.Atan(a.v), 1/(1+a.v*a.v)) }

func asinh(a dual) dual { return chain(a, math.Asinh(a.v), 1/math.Sqrt(1+a.v*a.v)) }

func sq(a dual) dual { return mul(a, a) }
