package root

import (
	"strings"

	"github.com/spf13/cobra"

	"github.com/loopwright/loopwright/cmd/internal/checkcmd"
	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/cmd/internal/gainscmd"
	"github.com/loopwright/loopwright/cmd/internal/librarycmd"
	"github.com/loopwright/loopwright/cmd/internal/paircmd"
	"github.com/loopwright/loopwright/cmd/internal/reportcmd"
	"github.com/loopwright/loopwright/cmd/internal/solvecmd"
	"github.com/loopwright/loopwright/cmd/internal/sweepcmd"
)

// subcommands returns the subcommands in help order.
func subcommands(f *cli.Factory) []*cobra.Command {
	return []*cobra.Command{
		checkcmd.NewCmdCheck(f, nil),
		solvecmd.NewCmdSolve(f, nil),
		gainscmd.NewCmdGains(f, nil),
		paircmd.NewCmdPair(f, nil),
		sweepcmd.NewCmdSweep(f, nil),
		sweepcmd.NewCmdMerge(f, nil),
		reportcmd.NewCmdReport(f, nil),
		librarycmd.NewCmdLibrary(f, nil),
	}
}

// isCobraUsageError recognises cobra's own argument errors (wrong number of
// arguments, unknown command), which deserve the usage text.
func isCobraUsageError(err error) bool {
	msg := err.Error()
	return strings.HasPrefix(msg, "unknown command") ||
		strings.HasPrefix(msg, "accepts ") ||
		strings.HasPrefix(msg, "requires ") ||
		strings.Contains(msg, "arg(s), received")
}
