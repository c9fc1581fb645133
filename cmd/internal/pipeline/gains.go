package pipeline

import (
	"context"

	"github.com/spf13/cobra"

	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/cmd/internal/modelarg"
	"github.com/loopwright/loopwright/interact"
	"github.com/loopwright/loopwright/interact/gainfile"
)

// RegisterJacobian adds --jacobian (ad or fd) to cmd.
func RegisterJacobian(cmd *cobra.Command, p *string) {
	cmd.Flags().StringVar(p, "jacobian", "ad", "Jacobian for Newton: ad (exact, automatic differentiation) or fd (central differences, a cross-check)")
}

// OptionsFor checks a --jacobian value and returns the pipeline options.
func OptionsFor(jacobian string) (*Options, error) {
	if jacobian != "ad" && jacobian != "fd" {
		return nil, cli.FlagErrorf("--jacobian %q: use ad or fd", jacobian)
	}
	return &Options{FD: jacobian == "fd"}, nil
}

// GainFlags are the flags of the commands that analyse gains: a MODEL
// argument with the model flags, or a measured gain file.
type GainFlags struct {
	Model     string // the MODEL argument, "" when --gains is used
	GainsFile string
	Jacobian  string
	Flags     modelarg.Flags
}

// Register adds --gains, --jacobian and the model flags to cmd.
func (g *GainFlags) Register(cmd *cobra.Command) {
	cmd.Flags().StringVar(&g.GainsFile, "gains", "", "use a measured gain matrix (CSV or YAML) instead of a MODEL")
	RegisterJacobian(cmd, &g.Jacobian)
	g.Flags.Register(cmd)
}

// Load returns the gains the flags name.
func (g *GainFlags) Load(f *cli.Factory) (*GainSource, error) {
	opts, err := OptionsFor(g.Jacobian)
	if err != nil {
		return nil, err
	}
	return LoadGains(f.Context, f, g.Model, &g.Flags, g.GainsFile, opts)
}

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
