package cli

import (
	"context"
	"os"

	"github.com/loopwright/loopwright/cmd/internal/iostreams"
)

// Factory hands commands what they share: streams, the environment, and
// the context that signals cancel.
type Factory struct {
	IO      *iostreams.IOStreams
	Context context.Context
	// Getenv reads the environment (os.Getenv outside tests).
	Getenv func(string) string
	// Version is the program version printed by --version.
	Version string
}

// NewFactory returns the factory for a real run.
func NewFactory(ctx context.Context, version string) *Factory {
	return &Factory{IO: iostreams.System(), Context: ctx, Getenv: os.Getenv, Version: version}
}

// TestFactory returns a factory with buffered streams for tests.
func TestFactory() *Factory {
	ios, _, _, _ := iostreams.Test()
	return &Factory{IO: ios, Context: context.Background(), Getenv: func(string) string { return "" }, Version: "test"}
}
