package batch

import (
	"fmt"
	"os"
	"testing"
)

func TestGlobsAndStems(t *testing.T) {
	cases := []struct {
		rel              string
		include, exclude []string
		want             bool
	}{
		{"a/x.png", nil, nil, true},
		{"a/x.png", []string{"*.tif"}, nil, false},
		{"a/x.png", []string{"x.*"}, nil, true},
		{"a/x.png", nil, []string{"a/*"}, false},
		{"b/a/x.png", nil, []string{"a/*"}, true}, // a pattern with / matches the whole relative path
	}
	for _, c := range cases {
		if got := globsAllow(c.rel, c.include, c.exclude); got != c.want {
			t.Errorf("globsAllow(%q, %v, %v) = %v", c.rel, c.include, c.exclude, got)
		}
	}
	got, err := stemsFor([]string{"a/x.png", "a/x.tif", "b/x.png"})
	if err != nil {
		t.Fatal(err)
	}
	want := []Input{{Input: "a/x.png", Stem: "a/x.png"}, {Input: "a/x.tif", Stem: "a/x.tif"}, {Input: "b/x.png", Stem: "b/x"}}
	if fmt.Sprint(got) != fmt.Sprint(want) {
		t.Errorf("stemsFor = %v, want %v", got, want)
	}
	if _, err := stemsFor([]string{"x.png", "x.png.tif", "x.tif"}); err == nil {
		t.Error("stem collision x.png (from x.png and x.tif) with x.png.tif not reported")
	}
}

// Temporary names carry the shard and the process.
func TestOwner(t *testing.T) {
	p := &Plan{Config: Config{ShardI: 1, ShardN: 2}}
	if want := fmt.Sprintf("shard1of2-pid%d", os.Getpid()); p.owner() != want {
		t.Errorf("owner %q, want %q", p.owner(), want)
	}
}
