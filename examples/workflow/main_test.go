package workflow_test

import (
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
)

func TestMain(m *testing.M) { loudskip.Main(m, "examples/workflow") }
