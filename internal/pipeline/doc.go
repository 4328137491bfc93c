// Package pipeline runs costdrift's jobs over one store, in the order of
// the data flow: sync every source, analyse every cost object, raise the
// alerts that follow, deliver them by mail, and the daemon's cycle that does
// all four. It also prepares what the reading commands show beside the
// store's tables: budgets and variances, and the chart of an object's
// analysed points.
//
// The commands, the daemon and any other front end call these functions and
// only present what they return (sync runs, analysis results, alert
// changes, deliveries); nothing here prints. Every function takes a context
// and stops at its cancellation, leaving each committed batch as it is.
//
// The package wires the stages together: it may import every stage
// package, and no stage package imports it.
package pipeline
