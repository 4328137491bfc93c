package costdrift

import "time"

// Cycle is one scheduled pass of the daemon: sync every source, then
// analyse, raise alerts and deliver them.
type Cycle struct {
	ID         int64
	StartedAt  time.Time
	FinishedAt time.Time // zero while the cycle runs
	Status     string    // running | ok | failed
	Error      string
	// Stages is how long each stage took, by stage name ("sync", "analyze").
	Stages map[string]time.Duration
}
