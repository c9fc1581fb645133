// Package cli holds what every loopwright command shares: exit codes, the
// error types that choose them, and the factory that hands commands their
// streams and libraries.
package cli

import (
	"errors"
	"fmt"
)

// ExitCode is the process exit status. The values are part of the
// command-line interface: scripts test them.
type ExitCode int

const (
	// ExitOK: the command did what was asked and found nothing wrong.
	ExitOK ExitCode = 0
	// ExitFinding: the command ran, and its analysis found a problem the
	// engineer must look at: the solver did not converge, the system is
	// structurally singular, no pairing passes the screens, sweep points
	// failed.
	ExitFinding ExitCode = 1
	// ExitBadInput: the model file, a data file, a flag or the usage is
	// wrong; the message says where and what to change.
	ExitBadInput ExitCode = 2
	// ExitInterrupted: stopped by SIGINT or SIGTERM; finished work is on disk.
	ExitInterrupted ExitCode = 3
	// ExitInternal: a bug in loopwright. Please report it.
	ExitInternal ExitCode = 4
)

// FlagError is a usage mistake; the usage is printed after it.
type FlagError struct{ Err error }

func (e *FlagError) Error() string { return e.Err.Error() }
func (e *FlagError) Unwrap() error { return e.Err }

// FlagErrorf formats a FlagError.
func FlagErrorf(format string, args ...any) error {
	return &FlagError{Err: fmt.Errorf(format, args...)}
}

// InputError wraps an error in the user's files or arguments (exit 2). The
// wrapped error usually lists file:line:col positions.
type InputError struct{ Err error }

func (e *InputError) Error() string { return e.Err.Error() }
func (e *InputError) Unwrap() error { return e.Err }

// FindingError says the command completed but its analysis found a problem
// (exit 1). The findings have already been printed in full; Err is a one-line
// summary.
type FindingError struct{ Err error }

func (e *FindingError) Error() string { return e.Err.Error() }
func (e *FindingError) Unwrap() error { return e.Err }

// Findingf formats a FindingError.
func Findingf(format string, args ...any) error {
	return &FindingError{Err: fmt.Errorf(format, args...)}
}

// ErrInterrupted is returned when a signal stopped the command.
var ErrInterrupted = errors.New("interrupted")

// CodeFor chooses the exit code for an error returned by a command.
func CodeFor(err error) ExitCode {
	var (
		fe *FlagError
		ie *InputError
		ne *FindingError
	)
	switch {
	case err == nil:
		return ExitOK
	case errors.Is(err, ErrInterrupted):
		return ExitInterrupted
	case errors.As(err, &fe), errors.As(err, &ie):
		return ExitBadInput
	case errors.As(err, &ne):
		return ExitFinding
	}
	// Anything else came from reading the user's files or arguments.
	return ExitBadInput
}
