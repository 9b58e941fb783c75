package outlock

import (
	"fmt"
	"sync"
	"testing"
)

// Shards of a job array start at the same moment. Each first tries the
// exclusive lock (to clear the names of earlier holders when alone) and
// then takes the shared one; a shard that meets another in that moment
// must not be refused as if an unsharded run held the folder. (Found on a
// real Slurm array, TestClusterSlurmReal: "in use by another cleave
// process (it has not yet written who it is)".) flock(2) locks belong to
// the open file, so goroutines that open the lock file each on their own
// contend as processes do.
func TestShardsStartingTogetherAllGetTheLock(t *testing.T) {
	dir := t.TempDir()
	for round := range 30 {
		const n = 16
		var wg sync.WaitGroup
		locks := make([]*Lock, n)
		errs := make([]error, n)
		start := make(chan struct{})
		for i := range n {
			wg.Add(1)
			go func() {
				defer wg.Done()
				<-start
				locks[i], errs[i] = Take(dir, false, fmt.Sprintf("cleave batch --shard %d/%d", i, n))
			}()
		}
		close(start)
		wg.Wait()
		for i, err := range errs {
			if err != nil {
				t.Fatalf("round %d: shard %d refused: %v", round, i, err)
			}
		}
		for _, l := range locks {
			l.Release()
		}
	}
	// An unsharded run is still refused while shards hold the folder.
	held, err := Take(dir, false, "a shard")
	if err != nil {
		t.Fatal(err)
	}
	defer held.Release()
	if _, err := Take(dir, true, "cleave batch"); err == nil {
		t.Fatal("an exclusive lock was granted while a shard holds the folder")
	}
}
