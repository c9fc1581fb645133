// Package iostreams carries a command's standard streams and what is known
// about the terminal behind them, so commands can be tested with buffers.
package iostreams

import (
	"bytes"
	"io"
	"os"

	"golang.org/x/term"
)

// IOStreams are the streams a command reads and writes.
type IOStreams struct {
	In     io.Reader
	Out    io.Writer
	ErrOut io.Writer

	// OutTTY and ErrTTY say whether Out and ErrOut are terminals.
	OutTTY bool
	ErrTTY bool
	// NoColor is set when the NO_COLOR environment variable is present
	// (https://no-color.org) or colour was switched off by a flag.
	NoColor bool
	// Width is the terminal width of Out in columns, or 0 when unknown.
	Width int
}

// System returns the process's own streams.
func System() *IOStreams {
	s := &IOStreams{In: os.Stdin, Out: os.Stdout, ErrOut: os.Stderr}
	s.OutTTY = term.IsTerminal(int(os.Stdout.Fd()))
	s.ErrTTY = term.IsTerminal(int(os.Stderr.Fd()))
	if _, ok := os.LookupEnv("NO_COLOR"); ok {
		s.NoColor = true
	}
	if s.OutTTY {
		if w, _, err := term.GetSize(int(os.Stdout.Fd())); err == nil {
			s.Width = w
		}
	}
	return s
}

// Test returns streams backed by buffers, with no terminal: the form every
// command test uses.
func Test() (s *IOStreams, in, out, errOut *bytes.Buffer) {
	in, out, errOut = &bytes.Buffer{}, &bytes.Buffer{}, &bytes.Buffer{}
	return &IOStreams{In: in, Out: out, ErrOut: errOut, NoColor: true}, in, out, errOut
}

// Color reports whether Out may carry ANSI colour.
func (s *IOStreams) Color() bool { return s.OutTTY && !s.NoColor }
