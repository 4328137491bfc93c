// Package report renders the current behaviour of every cost object as an
// aligned table or as JSON, and explains one cost object with the evidence
// the analysis stored. It reads what the analysis stored and never
// recomputes; it does no I/O beyond the writer it is given.
//
// It also owns how text from the ledger and the store is shown: every text
// output, the command's own included, prints such text through
// TerminalText, and JSON goes through EncodeJSON.
package report
