package scenarios

import (
	"fmt"
	"strings"
)

// Error is a problem with a scenario file at a known place. Its message says
// what is wrong and what would be valid.
type Error struct {
	// File is the scenario file's name as given to the loader.
	File string
	// Line and Column locate the offending value (1-based); 0 if unknown.
	Line, Column int
	// Field is the dotted path of the field, for example
	// "contamination[0].fraction".
	Field string
	// Msg says what is wrong and what would be valid.
	Msg string
}

// Error formats the error as file:line:column: field: message.
func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		fmt.Fprintf(&b, ":%d", e.Line)
		if e.Column > 0 {
			fmt.Fprintf(&b, ":%d", e.Column)
		}
	}
	if e.Field != "" {
		fmt.Fprintf(&b, ": %s", e.Field)
	}
	fmt.Fprintf(&b, ": %s", e.Msg)
	return b.String()
}

// ErrorList is every problem found in one scenario file, in file order.
type ErrorList []*Error

// maxErrors bounds how many problems one load reports.
const maxErrors = 20

// Error joins the problems, one per line.
func (l ErrorList) Error() string {
	lines := make([]string, len(l))
	for i, e := range l {
		lines[i] = e.Error()
	}
	return strings.Join(lines, "\n")
}

// Unwrap returns the individual errors, so errors.As finds an *Error.
func (l ErrorList) Unwrap() []error {
	out := make([]error, len(l))
	for i, e := range l {
		out[i] = e
	}
	return out
}

// errs collects errors for one file.
type errs struct {
	file string
	list ErrorList
}

// add records a problem at line, column.
func (c *errs) add(line, col int, field, format string, args ...any) {
	if len(c.list) >= maxErrors {
		return
	}
	c.list = append(c.list, &Error{File: c.file, Line: line, Column: col, Field: field, Msg: fmt.Sprintf(format, args...)})
}

// err returns the collected errors, or nil.
func (c *errs) err() error {
	if len(c.list) == 0 {
		return nil
	}
	return c.list
}
