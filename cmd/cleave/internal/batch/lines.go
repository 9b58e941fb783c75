package batch

import (
	"fmt"
	"path/filepath"
	"strings"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
)

// Summary is the line that ends a run: this shard's inputs, what was
// computed, up to date, failed, not done, warned and skipped, the seconds
// and, unsharded, the tables written.
func (p *Plan) Summary(oc Outcome) string {
	var b strings.Builder
	shard := ""
	if p.ShardN > 1 {
		shard = fmt.Sprintf(" (shard %d/%d of %d)", p.ShardI, p.ShardN, len(p.All))
	}
	if p.ShardFrom != "" {
		shard = fmt.Sprintf(" (shard %d/%d of %d, from %s)", p.ShardI, p.ShardN, len(p.All), p.ShardFrom)
	}
	fmt.Fprintf(&b, "%s%s: %d computed now, %d already up to date, %d failed", p.CountMine(), shard, oc.Computed, oc.UpToDate, oc.Failed)
	if oc.NotDone > 0 {
		fmt.Fprintf(&b, ", %d not done", oc.NotDone)
	}
	if oc.Warned > 0 {
		fmt.Fprintf(&b, ", %d with warnings to check (see the report)", oc.Warned)
	}
	truths := p.TruthsSkipped()
	if truths > 0 {
		fmt.Fprintf(&b, ", %s skipped", pipeline.Plural(truths, "truth mask"))
	}
	if n := len(p.Skipped) - truths; n == 1 {
		b.WriteString(", 1 other entry skipped")
	} else if n > 1 {
		fmt.Fprintf(&b, ", %d other entries skipped", n)
	}
	fmt.Fprintf(&b, " in %.1f s", oc.Seconds)
	if p.ShardN == 1 {
		fmt.Fprintf(&b, " -> %s", tables(p.Out))
	}
	return b.String()
}

// RebuildSummary is the line that ends a rebuild of dir: the inputs by
// status and the tables written.
func (c Counts) RebuildSummary(dir string) string {
	skipped := ""
	if c.Skipped > 0 {
		skipped = fmt.Sprintf(", %d skipped", c.Skipped)
	}
	return fmt.Sprintf("%s: %d ok, %d failed, %d pending%s -> %s", pipeline.Plural(c.Rows-c.Skipped, "input"), c.OK, c.Failed, c.Pending, skipped, tables(dir))
}

// tables are the paths of the tables of a batch in dir.
func tables(dir string) string {
	return filepath.Join(dir, ManifestName) + ", " + filepath.Join(dir, ObjectsName) + ", " + filepath.Join(dir, ReportName)
}
