// Package demo writes the invented demonstration data set of costdrift: the
// general ledger, the activity drivers and the chart of accounts of
// "Quillfeather Frames", a made-up bicycle-frame workshop with three cost
// centres (WELD welding, PAINT paint, ASSY assembly & dispatch), for the 36
// monthly periods 2023-07 through 2026-06.
//
// The data are invented. They exist for the demo and for ground-truth
// recovery tests only: every cost object has a designed behaviour
// (Expectations) that the analysis should find again from the files. They are
// not a reference for any computation; numeric checks against outside
// sources live with the numeric packages.
//
// It owns the designed cost behaviours (company.go) and the CSV files that
// carry them (write.go). Every random draw comes from a math/rand/v2 PCG
// source seeded from the one seed passed to Write, one stream per purpose, so
// the same seed gives byte-identical files on every machine and on every
// date; nothing reads the clock.
//
// It must not import other costdrift packages or anything outside the Go
// standard library, and it must not read files: it only writes the data set.
package demo
