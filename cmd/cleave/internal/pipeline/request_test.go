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

// Requests that segment alike compare equal: an unset labels format is
// png and an unset channel is all, as a record of them reads back.
func TestSameRequest(t *testing.T) {
	a := Request{Classes: 2}
	b, err := json.Marshal(a)
	if err != nil {
		t.Fatal(err)
	}
	var back Request
	if err := json.Unmarshal(b, &back); err != nil {
		t.Fatal(err)
	}
	if back == a || !SameRequest(a, back) {
		t.Errorf("%+v and its record %+v: SameRequest %v", a, back, SameRequest(a, back))
	}
	if c := (Request{Classes: 2, LabelsFormat: "png"}); !SameRequest(a, c) {
		t.Error("unset labels format differs from png")
	}
	if c := (Request{Classes: 3}); SameRequest(a, c) {
		t.Error("other classes compare equal")
	}
	if c := (Request{Classes: 2, Channel: "1"}); SameRequest(a, c) {
		t.Error("channel 1 compares equal to all")
	}
}
