package gainfile

import (
	"fmt"
	"sort"
)

// Error is a problem at a place in a gain file the user can fix.
type Error struct {
	File      string
	Line, Col int // from 1; Col counts bytes, 0 when only the line is known
	Msg       string
}

func (e *Error) Error() string {
	switch {
	case e.Line == 0:
		return fmt.Sprintf("%s: %s", e.File, e.Msg)
	case e.Col == 0:
		return fmt.Sprintf("%s:%d: %s", e.File, e.Line, e.Msg)
	}
	return fmt.Sprintf("%s:%d:%d: %s", e.File, e.Line, e.Col, e.Msg)
}

// ErrorList is every problem found in one file, sorted by position.
type ErrorList []*Error

func (l ErrorList) Error() string {
	switch len(l) {
	case 0:
		return "no errors"
	case 1:
		return l[0].Error()
	}
	return fmt.Sprintf("%s (and %d more errors)", l[0], len(l)-1)
}

// Err returns nil for an empty list, else the sorted list.
func (l ErrorList) Err() error {
	if len(l) == 0 {
		return nil
	}
	sort.SliceStable(l, func(i, j int) bool {
		if l[i].Line != l[j].Line {
			return l[i].Line < l[j].Line
		}
		return l[i].Col < l[j].Col
	})
	return l
}

// maxErrors caps the list: after that many, reading stops.
const maxErrors = 10

type collector struct {
	file string
	errs ErrorList
}

func (c *collector) add(line, col int, format string, args ...any) {
	if len(c.errs) < maxErrors {
		c.errs = append(c.errs, &Error{File: c.file, Line: line, Col: col, Msg: fmt.Sprintf(format, args...)})
	}
}

func (c *collector) full() bool { return len(c.errs) >= maxErrors }
