package batch

import "testing"

// Cells a spreadsheet would read as formulas get a leading single quote
// (the OWASP advice on CSV injection: =, +, -, @, tab, carriage return);
// other text is left alone. Expected values written by hand.
func TestCSVText(t *testing.T) {
	for in, want := range map[string]string{
		"=1+1":        "'=1+1",
		"+cmd":        "'+cmd",
		"-2+3.png":    "'-2+3.png",
		"@SUM(A1)":    "'@SUM(A1)",
		"\tx.png":     "'\tx.png",
		"\rx.png":     "'\rx.png",
		"a=b.png":     "a=b.png",
		"run:7 a.png": "run:7 a.png",
		"":            "",
		"'quoted":     "'quoted",
	} {
		if got := CSVText(in); got != want {
			t.Errorf("CSVText(%q) = %q, want %q", in, got, want)
		}
	}
}
