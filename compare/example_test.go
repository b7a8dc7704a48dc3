package compare_test

import (
	"fmt"

	"moltrail/compare"
)

// A user reference set: one signed dipole component along a molecule-fixed
// axis (from atom 0 to atom 1), in debye. The value is the built-in one
// for carbon monoxide (J. S. Muenter 1975, from memory).
func ExampleParseRefSet() {
	src := `{
	  "format": "moltrail-refset/1",
	  "name": "my-moments",
	  "description": "dipoles I trust",
	  "source": "see entries",
	  "entries": [{
	    "id": "co.mu",
	    "molecule": {"name": "carbon monoxide", "formula": "CO", "atoms": ["C", "O"]},
	    "quantity": {"kind": "dipole_component", "axis": {"from": [0], "to": [1]}},
	    "value": 0.1098, "unit": "D", "uncertainty": 0.0005,
	    "kind": "experiment", "source": "J. S. Muenter, J. Mol. Spectrosc. 55, 490 (1975)", "from_memory": true
	  }]
	}`
	set, err := compare.ParseRefSet([]byte(src), "my-moments.json")
	if err != nil {
		fmt.Println(err)
		return
	}
	e := set.Entries[0]
	fmt.Println(set.Name, e.ID, e.Quantity.Kind, compare.NaturalUnit(e.Quantity.Kind))
	fmt.Println(set.Names("CO"), set.Names("carbon monoxide"), set.Names("water"))
	// Output:
	// my-moments co.mu dipole_component D
	// true true false
}
