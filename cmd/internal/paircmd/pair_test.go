package paircmd

import (
	"testing"

	"github.com/loopwright/loopwright/cmd/internal/cli"
)

// TestFlags checks that the command line lands in PairOptions.
func TestFlags(t *testing.T) {
	tests := []struct {
		args    []string
		model   string
		gains   string
		format  string
		top     int
		consts  int
		wantErr bool
	}{
		{[]string{"lib:column"}, "lib:column", "", "table", 5, 0, false},
		{[]string{"--gains", "k.csv", "--format", "json", "--top", "0"}, "", "k.csv", "json", 0, 0, false},
		{[]string{"m.yaml", "--const", "NT=21", "--const", "NF=11"}, "m.yaml", "", "table", 5, 2, false},
		{[]string{"a.yaml", "b.yaml"}, "", "", "", 0, 0, true},
	}
	for _, tt := range tests {
		var got *PairOptions
		cmd := NewCmdPair(cli.TestFactory(), func(o *PairOptions) error { got = o; return nil })
		cmd.SetArgs(tt.args)
		cmd.SetOut(nil)
		cmd.SilenceUsage, cmd.SilenceErrors = true, true
		err := cmd.Execute()
		if (err != nil) != tt.wantErr {
			t.Errorf("%v: error %v, want error %v", tt.args, err, tt.wantErr)
			continue
		}
		if tt.wantErr {
			continue
		}
		if got.Source.Model != tt.model || got.Source.GainsFile != tt.gains || got.Format != tt.format || got.Top != tt.top || len(got.Source.Flags.Constants) != tt.consts {
			t.Errorf("%v: options %+v", tt.args, got)
		}
	}
}
