package pipeline

import (
	"encoding/json"
	"testing"
)

// --channel in a params file or record: a number stays a number (-1 for
// all, as records before channel names wrote it), a name is a string,
// and both read back as given; a negative index other than -1 is
// refused.
func TestChannelArgJSON(t *testing.T) {
	for _, tc := range []struct{ in, out string }{{`-1`, `-1`}, {`2`, `2`}, {`"GFP"`, `"GFP"`}, {`"all"`, `-1`}, {`"3"`, `3`}} {
		var c Channel
		if err := json.Unmarshal([]byte(tc.in), &c); err != nil {
			t.Fatalf("%s: %v", tc.in, err)
		}
		b, err := json.Marshal(c)
		if err != nil || string(b) != tc.out {
			t.Fatalf("%s -> %s (%v), want %s", tc.in, b, err, tc.out)
		}
	}
	var c Channel
	if err := json.Unmarshal([]byte(`-2`), &c); err == nil {
		t.Fatal("-2 accepted")
	}
	if b, _ := json.Marshal(Request{}); !json.Valid(b) {
		t.Fatal("zero Request does not marshal")
	}
}
