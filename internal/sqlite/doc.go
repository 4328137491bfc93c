// Package sqlite is costdrift's store: one SQLite file holding what was
// synced, fitted and decided, with tables and views that analysts query
// directly (see the README for the schema).
//
// Exported methods each run in one transaction, so a source batch or an
// analysis lands whole or not at all. The package must not parse sources,
// fit models or format reports; it only keeps what other stages hand it.
package sqlite
