package main

import (
	"errors"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/batch"
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

// csvText neutralizes a text cell of a CSV table that a spreadsheet
// would read as a formula (batch.CSVText).
func csvText(s string) string { return batch.CSVText(s) }
