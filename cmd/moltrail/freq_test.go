package main

import (
	"path/filepath"
	"strings"
	"testing"
)

// run --task frequencies prints the wavenumbers and whether the structure
// is a minimum; show prints the modes; an optimisation asks for them with
// --frequencies; --frequencies with task energy is refused.
func TestRunFrequenciesAndShow(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	w := writeFile(t, dir, "w.xyz", waterXYZ)
	r := moltrail(t, nil, "run", "--archive", arch, "--basis", "sto-3g", "--task", "optimize", "--frequencies", w)
	if r.code != 0 {
		t.Fatalf("exit %d: %s", r.code, r.stderr)
	}
	for _, want := range []string{"harmonic ", " cm⁻¹", "zero-point energy", "a minimum (no imaginary mode)"} {
		if !strings.Contains(r.stdout, want) {
			t.Errorf("run output lacks %q:\n%s", want, r.stdout)
		}
	}
	if !strings.Contains(r.stderr, "hessian: gradient 7 of 7 done") {
		t.Errorf("no progress per displacement on stderr:\n%s", r.stderr)
	}
	id := strings.Fields(r.stdout)[1]
	s := moltrail(t, nil, "show", "--archive", arch, id[:12])
	for _, want := range []string{"vibrations (harmonic)    a minimum", "central differences of analytic gradients", "reduced mass Da", "harmonic values: anharmonicity"} {
		if !strings.Contains(s.stdout, want) {
			t.Errorf("show lacks %q:\n%s", want, s.stdout)
		}
	}
	// A planar ammonia is a saddle point.
	p := writeFile(t, dir, "p.xyz", "4\nplanar ammonia\nN 0 0 0\nH 1.0 0 0\nH -0.5 0.8660254038 0\nH -0.5 -0.8660254038 0\n")
	r = moltrail(t, nil, "run", "--archive", arch, "--basis", "sto-3g", "--task", "frequencies", p)
	if r.code != 0 || !strings.Contains(r.stdout, "NOT a stationary point") {
		t.Errorf("unoptimised planar ammonia: exit %d\n%s%s", r.code, r.stdout, r.stderr)
	}
	r = moltrail(t, nil, "run", "--archive", arch, "--basis", "sto-3g", "--frequencies", w)
	if r.code != 2 || !strings.Contains(r.stderr, "frequencies are computed by task frequencies, or by task optimize") {
		t.Errorf("--frequencies with task energy: exit %d %s", r.code, r.stderr)
	}
}
