package segment

import (
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
)

// TestMain prints the reference checks that could not run, so plain
// 'go test ./...' shows them (package loudskip).
func TestMain(m *testing.M) { loudskip.Main(m, "segment") }
