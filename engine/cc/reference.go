package cc

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/scf"
)

// Active is the correlation problem of a closed-shell reference: the
// integrals over its active orbitals, their energies and the number of
// active occupied orbitals.
type Active struct {
	Source   Source
	Energies []float64
	Occupied int
	// Frozen is the number of frozen (uncorrelated) occupied orbitals.
	Frozen int
}

// FromRHF sets up the problem of a converged RHF reference with the lowest
// frozen orbitals left out, integrals by the exact four-index
// transformation of the reference's own integral engine.
func FromRHF(ref *scf.Result, frozen, threads int) (*Active, error) {
	if ref == nil {
		return nil, fmt.Errorf("cc: no reference")
	}
	if ref.Reference != "rhf" {
		return nil, fmt.Errorf("cc: the coupled-cluster code handles closed-shell RHF references only, not %s", ref.Reference)
	}
	if !ref.Converged {
		return nil, fmt.Errorf("cc: the RHF reference is not converged")
	}
	if ref.ERI == nil {
		return nil, fmt.Errorf("cc: the SCF result carries no integral engine")
	}
	nbf, nmo := ref.Ca.Dims()
	if frozen < 0 || frozen >= ref.NAlpha {
		return nil, fmt.Errorf("cc: cannot freeze %d of %d occupied orbitals", frozen, ref.NAlpha)
	}
	if ref.NAlpha >= nmo {
		return nil, fmt.Errorf("cc: no virtual orbitals (%d occupied of %d)", ref.NAlpha, nmo)
	}
	c := mat.NewDense(nbf, nmo-frozen, nil)
	c.Copy(ref.Ca.Slice(0, nbf, frozen, nmo))
	src, err := NewExact(ref.ERI, c, threads)
	if err != nil {
		return nil, err
	}
	return &Active{Source: src, Energies: append([]float64(nil), ref.Ea[frozen:nmo]...), Occupied: ref.NAlpha - frozen, Frozen: frozen}, nil
}
