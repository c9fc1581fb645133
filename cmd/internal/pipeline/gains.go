package pipeline

import (
	"context"

	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/cmd/internal/modelarg"
	"github.com/loopwright/loopwright/interact"
	"github.com/loopwright/loopwright/interact/gainfile"
)

// GainSource is where a gain set came from: a model at its operating point
// (Point set) or a measured gain file (Point nil).
type GainSource struct {
	Point *Point
	Gains *interact.GainSet
}

// LoadGains returns the gains of the model named by modelArg at its
// operating point, or, when gainsFile is set, the measured gains in that
// file. Exactly one of the two must be given.
func LoadGains(ctx context.Context, f *cli.Factory, modelArg string, flags *modelarg.Flags, gainsFile string, opts *Options) (*GainSource, error) {
	switch {
	case modelArg != "" && gainsFile != "":
		return nil, cli.FlagErrorf("give a MODEL or --gains FILE, not both")
	case modelArg == "" && gainsFile == "":
		return nil, cli.FlagErrorf("give a MODEL (a file or lib:NAME) or a measured gain matrix with --gains FILE")
	case gainsFile != "":
		g, err := gainfile.Load(gainsFile)
		if err != nil {
			return nil, &cli.InputError{Err: err}
		}
		return &GainSource{Gains: g}, nil
	}
	sys, err := flags.Load(f, modelArg)
	if err != nil {
		return nil, err
	}
	pt, err := Operate(ctx, sys, opts)
	if err != nil {
		return nil, err
	}
	g, err := pt.Gains()
	if err != nil {
		return nil, err
	}
	return &GainSource{Point: pt, Gains: g}, nil
}
