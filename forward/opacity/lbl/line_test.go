package lbl

import "testing"

func TestMergeLines(t *testing.T) {
	a := []Line{{Mol: 2, Iso: 1, Nu: 3, S: 1}, {Mol: 2, Iso: 1, Nu: 1, S: 1}}
	b := []Line{{Mol: 2, Iso: 1, Nu: 1, S: 1}, {Mol: 2, Iso: 2, Nu: 1, S: 1}, {Mol: 2, Iso: 1, Nu: 2, S: 1}}
	m := MergeLines(a, b)
	if len(m) != 4 || m[0].Nu != 1 || m[1].Nu != 1 || m[1].Iso != 2 || m[2].Nu != 2 || m[3].Nu != 3 {
		t.Errorf("merged %+v", m)
	}
}

// TestMoleculeNames: HITRAN ids as in molparam (1 H2O, 2 CO2, 6 CH4, 45 H2,
// 55 NF3) and their inverse.
func TestMoleculeNames(t *testing.T) {
	for name, id := range map[string]int{"H2O": 1, "CO2": 2, "O3": 3, "CO": 5, "CH4": 6, "O2": 7, "SO2": 9, "NH3": 11, "H2": 45, "NF3": 55, "XY": 0, "": 0} {
		if got := MoleculeID(name); got != id {
			t.Errorf("MoleculeID(%q) = %d, want %d", name, got, id)
		}
	}
	if s := (IsoKey{2, 1}).String(); s != "CO2 (molecule 2) isotopologue 1" {
		t.Errorf("IsoKey string %q", s)
	}
}
