// Package modelarg turns a command's MODEL argument and its model flags
// (--const, --set, --library) into an expanded model.System. A MODEL is a
// file path, or lib:NAME for a template from the library.
package modelarg

import (
	"fmt"
	"strconv"
	"strings"

	"github.com/spf13/cobra"

	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/library"
	"github.com/loopwright/loopwright/model"
)

// Flags are the model flags shared by every command that takes a MODEL.
type Flags struct {
	Constants  []string // --const NAME=VALUE
	Sets       []string // --set NAME=VALUE[ UNIT]
	LibraryDir string   // --library DIR
}

// Register adds the model flags to cmd.
func (fl *Flags) Register(cmd *cobra.Command) {
	cmd.Flags().StringArrayVar(&fl.Constants, "const", nil, "override a model constant, NAME=VALUE (repeatable)")
	cmd.Flags().StringArrayVar(&fl.Sets, "set", nil, "set a parameter, input or guess for this run, NAME=VALUE with an optional unit (repeatable)")
	RegisterLibrary(cmd, &fl.LibraryDir)
}

// RegisterLibrary adds the --library flag alone (for the library command).
func RegisterLibrary(cmd *cobra.Command, dir *string) {
	cmd.Flags().StringVar(dir, "library", "", "the user's template directory (default $LOOPWRIGHT_LIBRARY, else the user config directory)")
}

// Library opens the template library: embedded templates plus the user's
// directory chosen by flag, environment or default.
func Library(f *cli.Factory, flagDir string) (*library.Library, error) {
	dir, err := library.ResolveDir(flagDir, f.Getenv)
	if err != nil {
		return nil, &cli.InputError{Err: err}
	}
	return library.New(dir), nil
}

// Load reads and expands the model named by arg, applying the flags.
func (fl *Flags) Load(f *cli.Factory, arg string) (*model.System, error) {
	consts, err := parseConstants(fl.Constants)
	if err != nil {
		return nil, err
	}
	lib, err := Library(f, fl.LibraryDir)
	if err != nil {
		return nil, err
	}
	file, err := lib.Load(arg)
	if err != nil {
		return nil, &cli.InputError{Err: err}
	}
	sys, err := file.Expand(&model.ExpandOptions{Constants: consts})
	if err != nil {
		return nil, &cli.InputError{Err: err}
	}
	for _, s := range fl.Sets {
		name, value, ok := strings.Cut(s, "=")
		if !ok || strings.TrimSpace(name) == "" {
			return nil, cli.FlagErrorf("--set %q: write NAME=VALUE, for example --set \"F=1.1 kmol/min\"", s)
		}
		if err := sys.SetValue(strings.TrimSpace(name), strings.TrimSpace(value)); err != nil {
			return nil, &cli.InputError{Err: fmt.Errorf("--set %s: %w", s, err)}
		}
	}
	return sys, nil
}

func parseConstants(list []string) (map[string]float64, error) {
	if len(list) == 0 {
		return nil, nil
	}
	out := make(map[string]float64, len(list))
	for _, s := range list {
		name, value, ok := strings.Cut(s, "=")
		name = strings.TrimSpace(name)
		if !ok || name == "" {
			return nil, cli.FlagErrorf("--const %q: write NAME=VALUE, for example --const NT=61", s)
		}
		v, err := strconv.ParseFloat(strings.TrimSpace(value), 64)
		if err != nil {
			return nil, cli.FlagErrorf("--const %s: %q is not a number", name, value)
		}
		out[name] = v
	}
	return out, nil
}
