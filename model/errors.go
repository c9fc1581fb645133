package model

import (
	"errors"
	"fmt"
	"io"
	"sort"
)

// MaxErrors is how many errors an ErrorList keeps before it ends with
// "too many errors".
const MaxErrors = 20

// Error is a problem in a model file at a position the user can fix.
// It prints as "file:line:col: msg".
type Error struct {
	Pos Pos
	Msg string

	anchor Pos // for a note ("other declaration of x"): the error it belongs to
	note   bool
}

func (e *Error) Error() string { return e.Pos.String() + ": " + e.Msg }

// ErrorList is a list of errors, sorted by position with Sort. Notes such
// as "other declaration of x" stay right after the error they belong to.
type ErrorList []*Error

// Add appends an error at pos.
func (l *ErrorList) Add(pos Pos, format string, args ...any) {
	*l = append(*l, &Error{Pos: pos, Msg: fmt.Sprintf(format, args...)})
}

// addNote appends a note at pos belonging to the error at anchor.
func (l *ErrorList) addNote(anchor, pos Pos, format string, args ...any) {
	*l = append(*l, &Error{Pos: pos, Msg: fmt.Sprintf(format, args...), anchor: anchor, note: true})
}

func (e *Error) key() Pos {
	if e.note {
		return e.anchor
	}
	return e.Pos
}

func posLess(a, b Pos) bool {
	if a.File != b.File {
		return a.File < b.File
	}
	if a.Line != b.Line {
		return a.Line < b.Line
	}
	return a.Col < b.Col
}

// Sort sorts the list by position, keeping notes after their error, keeps
// one error per line (the first; later ones on the same line are most often
// follow-ups), and caps the list at MaxErrors.
func (l *ErrorList) Sort() {
	s := *l
	sort.SliceStable(s, func(i, j int) bool {
		ki, kj := s[i].key(), s[j].key()
		if ki != kj {
			return posLess(ki, kj)
		}
		return !s[i].note && s[j].note
	})
	out := s[:0]
	seen := map[[2]any]bool{}
	dropped := map[Pos]bool{}
	for _, e := range s {
		if e.note {
			if dropped[e.anchor] {
				continue
			}
			out = append(out, e)
			continue
		}
		k := [2]any{e.Pos.File, e.Pos.Line}
		if seen[k] {
			dropped[e.Pos] = true
			continue
		}
		seen[k] = true
		out = append(out, e)
	}
	if len(out) > MaxErrors {
		last := out[MaxErrors-1]
		out = append(out[:MaxErrors:MaxErrors], &Error{Pos: last.Pos, Msg: "too many errors"})
	}
	*l = out
}

// Err returns the list as an error, or nil when it is empty.
func (l ErrorList) Err() error {
	if len(l) == 0 {
		return nil
	}
	return l
}

// Error is the first error, with a count of the others.
func (l ErrorList) Error() string {
	switch len(l) {
	case 0:
		return "no errors"
	case 1:
		return l[0].Error()
	}
	return fmt.Sprintf("%s (and %d more errors)", l[0], len(l)-1)
}

// PrintError writes err to w, one error per line when it is an ErrorList.
func PrintError(w io.Writer, err error) {
	var l ErrorList
	if errors.As(err, &l) {
		for _, e := range l {
			fmt.Fprintln(w, e)
		}
		return
	}
	if err != nil {
		fmt.Fprintln(w, err)
	}
}
