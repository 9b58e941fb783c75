package batch

import "strings"

// CSVText neutralizes a text cell of a CSV table (a file name, a path, an
// error message) that a spreadsheet would read as a formula: a cell
// starting with =, +, -, @, a tab or a carriage return gets a leading
// single quote, as the OWASP guidance on CSV injection recommends. Number
// cells are never passed through it, so -1.5 stays a number.
func CSVText(s string) string {
	if s != "" && strings.ContainsRune("=+-@\t\r", rune(s[0])) {
		return "'" + s
	}
	return s
}
