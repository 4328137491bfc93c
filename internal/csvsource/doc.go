// Package csvsource reads general-ledger lines, activity (long or wide form)
// and the chart of accounts from CSV files in the canonical layout, or any
// layout mapped to it column by column.
//
// What is the CSV file's own is here: the delimiter, the encodings, quoting,
// blank lines, rows with the wrong number of fields. The canonical columns
// and the rules that turn a row into a ledger line, activity value or
// account, or a reject reason, are internal/canon's, which every source kind
// shares.
//
// Rows are streamed to a costdrift.SourceWriter one at a time, so memory does
// not grow with the file. A row that cannot be read becomes a Reject with its
// file:line and the reason; a file that cannot be read at all (missing,
// empty, a header without the required columns) is an error for the caller,
// which then keeps none of the batch. The package does not open the store.
package csvsource
