// Package xlsxsource reads general-ledger lines, activity (long or wide form)
// and the chart of accounts from one worksheet of an XLSX workbook, with the
// canonical columns, column mapping and rejects of the CSV source.
//
// It owns what is particular to a workbook: choosing the sheet (by name or
// by position), telling text cells from number cells, turning date cells
// (serial day numbers under a date format) into days, and reading number
// cells exactly into minor units. Those become canon.Cells, and the rules
// of a row after that (internal/canon) are the same for every source kind.
//
// Rows are streamed with excelize's row iterator and passed to a
// costdrift.SourceWriter one at a time, so memory does not grow with the
// sheet. A row that cannot be read becomes a Reject located as
// file:Sheet!row; a workbook that cannot be read at all (not a zip,
// encrypted, no such sheet, an empty sheet, a header without the required
// columns) is an error for the caller, which then keeps none of the batch.
//
// It must not write to the store other than through SourceWriter, evaluate
// formulas (it takes the result the spreadsheet saved), or round an amount
// beyond the float artefact of a number cell.
package xlsxsource
