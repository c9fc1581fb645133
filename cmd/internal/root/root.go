// Package root assembles loopwright's command tree and runs it: signals,
// exit codes, and printing each error once.
package root

import (
	"context"
	"errors"
	"fmt"
	"os"
	"os/signal"
	"runtime/debug"
	"syscall"

	"github.com/spf13/cobra"

	"github.com/loopwright/loopwright/cmd/internal/cli"
)

// version is set at build time with -ldflags "-X .../root.version=v1.2.3";
// otherwise the module version from the build info is used.
var version = ""

// Version returns the program version.
func Version() string {
	if version != "" {
		return version
	}
	if bi, ok := debug.ReadBuildInfo(); ok && bi.Main.Version != "" && bi.Main.Version != "(devel)" {
		return bi.Main.Version
	}
	return "devel"
}

// NewCmdRoot returns the loopwright command with every subcommand.
func NewCmdRoot(f *cli.Factory) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "loopwright",
		Short: "Choose control-loop pairings from steady-state process models",
		Long: `loopwright takes a steady-state model of a process unit (mass, component and
energy balances in a YAML file) or a measured gain matrix, finds the operating
point, derives the steady-state gains, and ranks the candidate pairings of
manipulated and controlled variables on published interaction measures.

A MODEL argument is a file path, or a template from the library written as
lib:NAME (for example lib:column). See 'loopwright library list'.

Exit status: 0 success; 1 the analysis found a problem (no convergence,
structurally singular system, no acceptable pairing, failed sweep points);
2 bad input or usage; 3 interrupted; 4 internal error.`,
		Version:       f.Version,
		SilenceErrors: true,
		SilenceUsage:  true,
	}
	cmd.SetOut(f.IO.Out)
	cmd.SetErr(f.IO.ErrOut)
	cmd.SetIn(f.IO.In)
	cmd.SetVersionTemplate("loopwright {{.Version}}\n")
	cmd.PersistentFlags().Bool("no-color", false, "never colour the output (NO_COLOR is honoured too)")
	cmd.PersistentPreRun = func(c *cobra.Command, _ []string) {
		if v, _ := c.Flags().GetBool("no-color"); v {
			f.IO.NoColor = true
		}
	}
	cmd.AddCommand(subcommands(f)...)
	cmd.SetFlagErrorFunc(func(c *cobra.Command, err error) error {
		return &cli.FlagError{Err: err}
	})
	return cmd
}

// Main runs loopwright with the process's arguments and returns its exit code.
func Main() (code cli.ExitCode) {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	f := cli.NewFactory(ctx, Version())
	defer func() {
		if r := recover(); r != nil {
			fmt.Fprintf(f.IO.ErrOut, "loopwright: internal error: %v\n%s\nPlease report this with the model file that caused it.\n", r, debug.Stack())
			code = cli.ExitInternal
		}
	}()
	return Run(f, os.Args[1:])
}

// Run executes the command line args with the given factory and prints any
// error once. It is Main without the process: tests call it.
func Run(f *cli.Factory, args []string) cli.ExitCode {
	cmd := NewCmdRoot(f)
	cmd.SetArgs(args)
	c, err := cmd.ExecuteContextC(f.Context)
	if err == nil {
		return cli.ExitOK
	}
	if f.Context.Err() != nil && !errors.Is(err, cli.ErrInterrupted) {
		err = fmt.Errorf("%w: %v", cli.ErrInterrupted, err)
	}
	printError(f, c, err)
	return cli.CodeFor(err)
}

func printError(f *cli.Factory, c *cobra.Command, err error) {
	var fe *cli.FlagError
	if errors.As(err, &fe) || isCobraUsageError(err) {
		fmt.Fprintf(f.IO.ErrOut, "loopwright: %v\n\n%s", err, c.UsageString())
		return
	}
	var ne *cli.FindingError
	if errors.As(err, &ne) {
		fmt.Fprintf(f.IO.ErrOut, "loopwright: %v\n", err)
		return
	}
	fmt.Fprintln(f.IO.ErrOut, err)
}
