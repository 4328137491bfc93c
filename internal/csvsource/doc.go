// Package csvsource reads general-ledger lines, activity (long or wide form)
// and the chart of accounts from CSV files in the canonical layout, or any
// layout mapped to it column by column.
//
// Rows are streamed to a costdrift.SourceWriter one at a time, so memory does
// not grow with the file. A row that cannot be read becomes a Reject with its
// file:line and the reason; a file that cannot be read at all (missing,
// empty, a header without the required columns) is an error for the caller,
// which then keeps none of the batch. The package does not open the store.
package csvsource
