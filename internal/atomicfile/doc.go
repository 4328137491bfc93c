// Package atomicfile writes a file whole or not at all. What a command
// exports (a budget, a variance report, a chart, the demo's data, the
// config, an outbox message) goes to a temporary file in the target's
// folder, is synced to disk, gets its final mode and is then renamed over
// the target; a write that fails on the way, such as on a full disk,
// leaves the earlier file as it was and no temporary file behind.
//
// It owns only that sequence. It must not know what is written: callers
// pass a function that writes to the file, and their own errors come back
// unchanged. It imports no other costdrift package, so that the command
// and every package that writes files can use it.
package atomicfile
