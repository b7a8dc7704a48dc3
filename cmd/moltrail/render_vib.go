package main

import (
	"fmt"
	"io"
	"strings"

	"moltrail/engine"
	"moltrail/engine/molecule"
	"moltrail/engine/vib"
)

// wavenumber prints a harmonic wavenumber, an imaginary one as "312.4i".
func wavenumber(w float64) string {
	if w < 0 {
		return fmt.Sprintf("%.1fi", -w)
	}
	return fmt.Sprintf("%.1f", w)
}

// stationaryWords says in words what kind of point a geometry is.
func stationaryWords(v *engine.Vibrations) string {
	switch v.StationaryPoint {
	case "minimum":
		return "a minimum (no imaginary mode)"
	case "saddle-point":
		return fmt.Sprintf("NOT a minimum: a saddle point with %d imaginary mode(s)", v.ImaginaryModes)
	case "not-stationary":
		return fmt.Sprintf("NOT a stationary point (largest force %.1e hartree/bohr)", v.MaxForce)
	}
	return v.StationaryPoint
}

// writeVibrationsLine is the one-line summary after a run.
func writeVibrationsLine(w io.Writer, v *engine.Vibrations) {
	if v == nil {
		return
	}
	var ws []string
	for _, x := range v.WavenumbersPerCm {
		ws = append(ws, wavenumber(x))
	}
	fmt.Fprintf(w, "harmonic %s cm⁻¹\n", strings.Join(ws, "  "))
	fmt.Fprintf(w, "         zero-point energy %.6f hartree (%.2f kJ/mol); %s\n", v.ZeroPointHartree, v.ZeroPointHartree*molecule.KJPerMolPerHartree, stationaryWords(v))
}

// writeVibrations is the vibrational section of show.
func writeVibrations(w io.Writer, v *engine.Vibrations) {
	if v == nil {
		return
	}
	fmt.Fprintf(w, "  vibrations (harmonic)    %s\n", stationaryWords(v))
	fmt.Fprintf(w, "    %-22s %s, %d displaced calculations\n", "Hessian", v.Method, v.Calculations)
	fmt.Fprintf(w, "    %-22s %.8f hartree  (%.3f kJ/mol, %.1f cm⁻¹)\n", "zero-point energy", v.ZeroPointHartree, v.ZeroPointHartree*molecule.KJPerMolPerHartree, v.ZeroPointHartree*vib.HartreePerCm)
	fmt.Fprintf(w, "    %-22s %.2e hartree/bohr\n", "largest force", v.MaxForce)
	fmt.Fprintf(w, "    %5s %14s %16s\n", "mode", "cm⁻¹", "reduced mass Da")
	for k, x := range v.WavenumbersPerCm {
		mr := ""
		if k < len(v.ReducedMassesDalton) {
			mr = fmt.Sprintf("%.4f", v.ReducedMassesDalton[k])
		}
		fmt.Fprintf(w, "    %5d %14s %16s\n", k+1, wavenumber(x), mr)
	}
	if v.SmallImaginaryModes > 0 {
		fmt.Fprintf(w, "    %d small imaginary wavenumber(s) are finite-difference noise\n", v.SmallImaginaryModes)
	}
	fmt.Fprintln(w, "    harmonic values: anharmonicity and the method's own errors are not included")
}

// writeOptSteps adds the kept point group and the rejected steps of an
// optimisation to show.
func writeOptSteps(w io.Writer, res engine.Result) {
	if res.PointGroup != "" {
		fmt.Fprintf(w, "  %-22s %s (kept through the optimisation)\n", "point group", res.PointGroup)
	}
	var rej []string
	for _, st := range res.Trajectory {
		if st.Rejected {
			rej = append(rej, fmt.Sprint(st.Step))
		}
	}
	if len(rej) > 0 {
		fmt.Fprintf(w, "  %-22s %s (the energy rose; the optimisation went back and took a shorter step)\n", "rejected steps", strings.Join(rej, ", "))
	}
}
