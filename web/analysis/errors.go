package analysis

import (
	"errors"
	"strings"
)

// OptionError says which option of an analysis cannot be used, and why. Option is the option's field name
// in its options type (for example "TocMinWtPct"); the web layer maps it to the URL parameter that
// carries it and answers 400 with Problem beside that parameter.
type OptionError struct {
	Option  string
	Problem string
}

func (e *OptionError) Error() string { return e.Option + ": " + e.Problem }

// OptionErrors collects every unusable option of one request, so a page can say at once all that is wrong.
type OptionErrors []*OptionError

func (es OptionErrors) Error() string {
	parts := make([]string, len(es))
	for i, e := range es {
		parts[i] = e.Error()
	}
	return strings.Join(parts, "; ")
}

// Err returns nil when there are no problems, so callers can write `return opts, errs.Err()`.
func (es OptionErrors) Err() error {
	if len(es) == 0 {
		return nil
	}
	return es
}

// AsOptionErrors returns the option problems carried by err (one or many), or nil when err is not one.
func AsOptionErrors(err error) OptionErrors {
	var many OptionErrors
	if errors.As(err, &many) {
		return many
	}
	var one *OptionError
	if errors.As(err, &one) {
		return OptionErrors{one}
	}
	return nil
}
