package main

import (
	"errors"
	"regexp"
	"strings"

	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment"
)

// withFlags returns err with the library's parameter names written as
// this command's flags: the libraries name their parameters (imageio
// and segment know nothing of flags), and every parameter of theirs that
// a user sets has a flag of the same name; a name in backquotes (the
// pipeline's advice, "choose another `out`") becomes its flag too. The
// result unwraps to err.
func withFlags(err error) error {
	if err == nil {
		return nil
	}
	msg := flagQuoted(err.Error())
	var oe *imageio.OptionError
	if errors.As(err, &oe) {
		msg = strings.Replace(msg, oe.Error(), "--"+oe.Error(), 1)
	}
	var pe *segment.ParamError
	if errors.As(err, &pe) {
		msg = strings.Replace(msg, pe.Error(), "--"+pe.Error(), 1)
	}
	switch {
	case errors.Is(err, imageio.ErrExists):
		msg = strings.Replace(msg, "(overwriting needs force)", "(use --force to overwrite)", 1)
	case errors.Is(err, imageio.ErrTooLarge):
		msg = strings.Replace(msg, "(max-megapixels)", "(--max-megapixels)", 1)
	case errors.Is(err, segment.ErrMemory):
		msg = strings.NewReplacer("max-memory", "--max-memory", "lower radius", "lower --radius",
			"(superpixels N)", "(--superpixels N)", "lower superpixels", "lower --superpixels",
			"turn off flatten", "turn off --flatten").Replace(msg)
	}
	if msg == err.Error() {
		return err
	}
	return &flagged{err, msg}
}

// flagged is an error with its message rewritten by withFlags.
type flagged struct {
	err error
	msg string
}

func (e *flagged) Error() string { return e.msg }
func (e *flagged) Unwrap() error { return e.err }

// quotedParam is a parameter name in backquotes, as the libraries write
// them in messages that advise a change (segment.Warning).
var quotedParam = regexp.MustCompile("`([a-z][a-z0-9-]*)`")

// flagQuoted writes every backquoted parameter name in msg as its flag
// ("raise `max-ncut`" -> "raise --max-ncut").
func flagQuoted(msg string) string {
	return quotedParam.ReplaceAllString(msg, "--$1")
}
