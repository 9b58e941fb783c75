package main

import (
	"errors"
	"fmt"
	"testing"

	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment"
)

// Library errors come out naming the command's flags, whatever wraps
// them, and still match their sentinels and types (the flag names are
// the parameter names, common practice in this command).
func TestWithFlags(t *testing.T) {
	cases := []struct {
		err  error
		want string
	}{
		{&imageio.OptionError{Name: "channel", Problem: "3 is out of range"}, "--channel 3 is out of range"},
		{fmt.Errorf("a.png: %w", &imageio.OptionError{Name: "flatten-mode", Problem: "is bad"}), "a.png: --flatten-mode is bad"},
		{&segment.ParamError{Name: "background", Problem: "needs classes 2 or more"}, "--background needs classes 2 or more"},
		{fmt.Errorf("out/a.json: %w", imageio.ErrExists), "out/a.json: output exists (use --force to overwrite)"},
		{fmt.Errorf("%w: 9x9 exceeds the limit of 1 (max-megapixels)", imageio.ErrTooLarge), "image too large: 9x9 exceeds the limit of 1 (--max-megapixels)"},
		{errors.New("plain"), "plain"},
	}
	for _, c := range cases {
		got := withFlags(c.err)
		if got.Error() != c.want {
			t.Errorf("withFlags(%q) = %q, want %q", c.err, got, c.want)
		}
		if !errors.Is(got, c.err) {
			t.Errorf("withFlags(%q) no longer unwraps to it", c.err)
		}
	}
	if withFlags(nil) != nil {
		t.Error("withFlags(nil) != nil")
	}
}
