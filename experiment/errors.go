package experiment

import (
	"errors"
	"fmt"
)

// ErrInput is matched (errors.Is) by every error that the user's input
// caused: the experiment file, the cohort's files, a run folder or plan
// that does not fit the command. skein exits with code 2 on them.
var ErrInput = errors.New("bad input")

// inputError marks err as caused by the user's input; its message is
// err's.
type inputError struct{ err error }

func (e *inputError) Error() string   { return e.err.Error() }
func (e *inputError) Unwrap() []error { return []error{e.err, ErrInput} }

// badInput marks err (nil stays nil) as matching ErrInput.
func badInput(err error) error {
	if err == nil {
		return nil
	}
	return &inputError{err}
}

// badInputf is badInput of a formatted error.
func badInputf(format string, args ...any) error {
	return badInput(fmt.Errorf(format, args...))
}
