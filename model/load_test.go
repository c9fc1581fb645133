package model

import "testing"

func TestNearest(t *testing.T) {
	keys := []string{"model", "variables", "equations", "parameters", "define"}
	tests := []struct{ in, want string }{
		{"varables", "variables"},
		{"equatoins", "equations"}, // a swap of neighbours is one edit
		{"modle", "model"},
		{"Parameters", "parameters"},
		{"xyz", ""},
		{"definitions", ""},
	}
	for _, tc := range tests {
		if got := nearest(tc.in, keys); got != tc.want {
			t.Errorf("nearest(%q) = %q, want %q", tc.in, got, tc.want)
		}
	}
}
