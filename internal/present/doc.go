// Package present formats figures for people: money with thousands
// separators and its currency, rates with their unit, driver values in
// significant digits, p-values no finer than the method that produced
// them can resolve, and statistics beyond a sane range in words. Every
// text output (tables, explain, mail, spreadsheets) formats through it, so
// the same figure reads the same everywhere.
//
// It is pure: values in, strings out, no I/O, and it knows nothing of the
// product's stages. JSON does not go through it: JSON keeps raw finite
// numbers, and Finite says which numbers JSON may hold.
package present
