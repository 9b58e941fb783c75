package main

import (
	"strings"
	"unicode"
	"unicode/utf8"
)

// channelNames names the colour channels of a three-channel image in the
// region table's columns.
var channelNames = []string{"red", "green", "blue"}

// intensityPlanes are the planes measured in the region table, in the
// image's own units: the intensity plane (the luma, or the channel chosen
// with --channel) and, for a colour image, each of its channels; names
// are the column suffixes ("" for the intensity plane).
func intensityPlanes(raw []float32, channels [][]float32) (planes [][]float32, names []string) {
	planes, names = [][]float32{raw}, []string{""}
	if len(channels) == len(channelNames) {
		for c, p := range channels {
			planes, names = append(planes, p), append(names, "_"+channelNames[c])
		}
	}
	return planes, names
}

// maxUnitLen is the longest --unit, in characters.
const maxUnitLen = 16

// checkUnit accepts a short unit name for the region table's column
// names: 1 to maxUnitLen letters (µ included), digits, '/', '^' or '_'.
// No such name needs CSV quoting or can start a spreadsheet formula.
func checkUnit(unit string) error {
	n := 0
	for _, r := range unit {
		n++
		if !unicode.IsLetter(r) && !unicode.IsDigit(r) && !strings.ContainsRune("µ/^_", r) {
			return usagef("--unit must be a short unit name (letters, digits, µ, /, ^ or _), got %q", unit)
		}
	}
	if n == 0 || n > maxUnitLen || !utf8.ValidString(unit) {
		return usagef("--unit must be a unit name of 1 to %d characters, got %q", maxUnitLen, unit)
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
