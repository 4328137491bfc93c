// Package report renders the current behaviour of every cost object as an
// aligned table or as JSON, and explains one cost object with the evidence
// the analysis stored. It reads what the analysis stored and never
// recomputes; it does no I/O beyond the writer it is given.
package report
