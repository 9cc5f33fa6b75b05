package uv

import (
	"errors"
	"fmt"
	"strconv"
)

// Sentinel causes of a *ParseError, for use with errors.Is.
var (
	// ErrNotNumber: a field that must be a number is not one.
	ErrNotNumber = errors.New("not a number")
	// ErrNonFinite: a number is infinite, NaN or out of float64 range.
	ErrNonFinite = errors.New("not finite")
	// ErrWeight: a weight is zero or negative.
	ErrWeight = errors.New("weight must be > 0")
	// ErrSigma: a sigma is zero or negative.
	ErrSigma = errors.New("sigma must be > 0")
	// ErrFreq: a frequency is zero or negative.
	ErrFreq = errors.New("frequency must be > 0")
	// ErrInteger: an ant1, ant2, spw or chan field is not a suitable integer.
	ErrInteger = errors.New("not a valid integer")
	// ErrFlagValue: a flag field is not 0, 1, true or false.
	ErrFlagValue = errors.New("not a flag")
	// ErrFieldCount: a row has fewer or more fields than the header.
	ErrFieldCount = errors.New("wrong number of fields")
	// ErrMissingColumn: the header lacks a required column.
	ErrMissingColumn = errors.New("missing column")
	// ErrDuplicateColumn: the header names the same quantity twice.
	ErrDuplicateColumn = errors.New("duplicate column")
	// ErrNoFreq: u, v are in metres but no frequency is known.
	ErrNoFreq = errors.New("no frequency for metres to wavelengths")
	// ErrEmpty: the table has no header line.
	ErrEmpty = errors.New("empty file")
	// ErrBinary: the input is not text.
	ErrBinary = errors.New("binary file")
	// ErrMetadata: a "# key: value" metadata line has a bad value.
	ErrMetadata = errors.New("bad metadata")
)

// A ParseError reports bad input in a visibility table: where it is and
// what was expected. Line and Column are 1-based; zero means unknown (a
// whole-file problem, or a problem with the line rather than one field).
// Field is the header name of the column involved, if any. Err wraps one of
// the sentinel errors of this package, so errors.Is(err, ErrNotNumber) and
// the like work.
type ParseError struct {
	File   string
	Line   int
	Column int
	Field  string
	Err    error
}

// Error formats e as, for example,
//
//	obs.csv:1043: column "re": "1.2.3" is not a number
func (e *ParseError) Error() string {
	s := e.File
	if s == "" {
		s = "table"
	}
	if e.Line > 0 {
		s += ":" + strconv.Itoa(e.Line)
	}
	if e.Field != "" {
		s += ": column " + strconv.Quote(e.Field)
	}
	return s + ": " + e.Err.Error()
}

// Unwrap returns the cause.
func (e *ParseError) Unwrap() error { return e.Err }

// causeError is a cause with its own message that still matches its
// sentinel under errors.Is.
type causeError struct {
	msg      string
	sentinel error
}

func (c *causeError) Error() string { return c.msg }
func (c *causeError) Unwrap() error { return c.sentinel }

// cause returns an error reading msg (formatted) that wraps sentinel.
func cause(sentinel error, format string, a ...any) error {
	return &causeError{msg: fmt.Sprintf(format, a...), sentinel: sentinel}
}

// quoteField quotes a field for an error message, shortening long ones.
func quoteField(b []byte) string {
	const max = 40
	if len(b) > max {
		return strconv.Quote(string(b[:max])) + "…"
	}
	return strconv.Quote(string(b))
}
