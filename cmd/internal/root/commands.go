package root

import (
	"strings"

	"github.com/spf13/cobra"

	"github.com/loopwright/loopwright/cmd/internal/cli"
)

// commands lists the subcommand constructors in help order.
var commands = []func(*cli.Factory) *cobra.Command{}

// isCobraUsageError recognises cobra's own argument errors (wrong number of
// arguments, unknown command), which deserve the usage text.
func isCobraUsageError(err error) bool {
	msg := err.Error()
	return strings.HasPrefix(msg, "unknown command") ||
		strings.HasPrefix(msg, "accepts ") ||
		strings.HasPrefix(msg, "requires ") ||
		strings.Contains(msg, "arg(s), received")
}
