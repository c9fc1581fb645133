package model

import (
	"strings"
	"testing"
)

// TestFormatNotes checks the extensions that testdata/models/README.md
// promises.
func TestFormatNotes(t *testing.T) {
	text := `model: notes
constants: {NT: 5, NF: "(NT+1)/2"}
sets: {stage: 1..NT}
parameters:
  k: {value: [1, 2, 3, 4, 5], over: stage}
variables:
  x: {over: stage}
  z:
outputs:
  x[NT]: {span: 0.01}
  k:
  z:
envelope:
  "k[2]": {from: 1, to: 10, points: 4, spacing: log}
equations:
  e: {for: i in stage, eq: "x[i] = k[i] * (i == NF ? 2 : 1)"}
  f: "z = sum(i in stage, x[i]) - x[NT]"
`
	sys := mustExpand(t, "notes.yaml", text, nil)
	var outs []string
	for _, o := range sys.Outputs {
		outs = append(outs, o.Name)
	}
	if got := strings.Join(outs, " "); got != "x[NT] k[1] k[2] k[3] k[4] k[5] z" {
		t.Errorf("outputs %s", got)
	}
	if sys.Constants["NF"] != 3 {
		t.Errorf("NF = %g", sys.Constants["NF"])
	}
	if len(sys.Envelope) != 1 || sys.Params[sys.Envelope[0].Param].Name != "k[2]" || !sys.Envelope[0].Log || sys.Envelope[0].Points != 4 {
		t.Errorf("envelope %+v", sys.Envelope)
	}
	x, p := values(sys.Unknowns), values(sys.Params)
	// e[3] is the NF stage: x[3] - 2*k[3] = 1 - 6.
	if got := eval(sys.Equations[2].Residual, x, p); got != -5 {
		t.Errorf("e[3] residual %g, want -5", got)
	}
	// f: z - (sum of x over 5 stages - x[5]) = 1 - 4.
	if got := eval(sys.Equations[5].Residual, x, p); got != -3 {
		t.Errorf("f residual %g, want -3", got)
	}
}
