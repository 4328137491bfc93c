// Package sourcecheck holds no code, only tests: it puts the same ledger
// lines and activity values through every source kind (a CSV file, an XLSX
// workbook with text cells and with number and date cells, a SQLite
// database through the SQL source with text columns and with typed
// columns, and a SAF-T Financial file for the lines SAF-T can express) and
// compares what each stores and rejects.
//
// It stands apart from the source packages so that it can import all of
// them while none of them imports another. Where two kinds disagree on a
// stored row, a wrong number lands in the store from one of them; where
// they disagree on a reject reason, the same mistake reads differently by
// where it came from. A difference the tests allow (a number cell is quoted
// as a number, a SAF-T reason names its XML element) is written out beside
// the kind.
package sourcecheck
