// Package skipper is run by loudskip's test through the go command: one
// check skipped by loudskip.Skip, one that passes.
package skipper

import (
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
)

func TestMain(m *testing.M) { loudskip.Main(m, "skipper") }

func TestReference(t *testing.T) {
	loudskip.Skip(t, "the reference package is missing (planted by loudskip's test)")
}

func TestOther(t *testing.T) {}
