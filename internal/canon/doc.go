// Package canon holds the rules that turn one row of a source, cell by
// canonical column, into a costdrift.LedgerLine, ActivityValue or Account,
// or into the reason it cannot be stored. Every source kind reads through
// them, so that the same line gives the same stored row, or the same reject
// reason, whether it came from a CSV file, a workbook or a query:
//
//   - header binding: canonical column names matched case-insensitively,
//     the source's `columns` mapping, the required columns, and the
//     message naming what is missing;
//   - amounts: text in the source's notation read exactly by
//     money.Currency.Parse (decimal comma, thousands separator, the bound
//     money.MaxMinor), a signed amount or debit minus credit (bounded too),
//     and a line in a foreign currency counted through its
//     functional_amount, never converted here;
//   - quantities: activity values, finite and not negative, written in the
//     same notation;
//   - dates and periods: text in the source's date_format, a YYYY-MM
//     period, and the calendar's period of the day;
//   - line numbers: a whole number from 1, or, where a source may leave them
//     out, the line's place in its entry.
//
// A source turns what it reads into Cells: text as written, or, for a value
// it holds typed (a number or date cell of a workbook, a NUMERIC, REAL or
// DATE column of a database), the amount, number or day it read itself,
// or the reason it cannot be one. Everything after that is decided here.
//
// The package does no I/O and knows no file format; it must not import a
// source package or the store.
package canon
