package main

import (
	"errors"
	"strings"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
)

// checkUnit checks --unit (pipeline.CheckUnit), naming the flag.
func checkUnit(unit string) error {
	switch err := pipeline.CheckUnit(unit); {
	case errors.Is(err, pipeline.ErrUnitChars):
		return usagef("--unit must be a short unit name (letters, digits, µ, /, ^ or _), got %q", unit)
	case err != nil:
		return usagef("--unit must be a unit name of 1 to %d characters, got %q", pipeline.MaxUnitLen, unit)
	}
	return nil
}

// csvText neutralizes a text cell of a CSV table (a file name, a path, an
// error message) that a spreadsheet would read as a formula: a cell
// starting with =, +, -, @, a tab or a carriage return gets a leading
// single quote, as the OWASP guidance on CSV injection recommends. Number
// cells are never passed through it, so -1.5 stays a number.
func csvText(s string) string {
	if s != "" && strings.ContainsRune("=+-@\t\r", rune(s[0])) {
		return "'" + s
	}
	return s
}
