// Package report renders the current behaviour of every cost object as an
// aligned table or as JSON. It reads what the analysis stored and never
// recomputes; it does no I/O beyond the writer it is given.
package report
