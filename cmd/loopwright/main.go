// Command loopwright chooses control-loop pairings from steady-state process
// models. See README.md or run 'loopwright --help'.
package main

import (
	"os"

	"github.com/loopwright/loopwright/cmd/internal/root"
)

func main() { os.Exit(int(root.Main())) }
