package pipeline

import (
	"encoding/json"
	"strings"
	"testing"
)

// A params file is one JSON object (RFC 8259): a leading byte-order mark
// is skipped, numbers stay as written, and a key given twice, a value
// that is not an object or data after it are errors naming the file.
// Expected results worked by hand.
func TestReadParamsObject(t *testing.T) {
	m, err := ReadParamsObject("p.json", []byte("\xef\xbb\xbf{\"sigma-i\": 0.10, \"method\": \"kway\"}\n"))
	if err != nil || m["sigma-i"] != json.Number("0.10") || m["method"] != "kway" || len(m) != 2 {
		t.Errorf("got %v, %v", m, err)
	}
	for in, want := range map[string]string{
		`{"radius": 3, "radius": 4}`: `parameter "radius" is given twice`,
		`[1, 2]`:                     "not a JSON object of parameters",
		`{"radius": 3} {}`:           "unexpected data after the JSON object",
		`{"radius": }`:               "not a JSON object of parameters",
		``:                           "not a JSON object of parameters",
	} {
		_, err := ReadParamsObject("p.json", []byte(in))
		if err == nil || !strings.Contains(err.Error(), "params file p.json") || !strings.Contains(err.Error(), want) {
			t.Errorf("%q: %v, want %q", in, err, want)
		}
	}
}
