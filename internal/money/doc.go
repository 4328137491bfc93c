// Package money parses ledger amounts exactly into integer minor units of a
// currency (cents for EUR) and formats them back. Money never passes through
// a float on the way in.
//
// It owns the ISO 4217 minor-unit exponents it knows and the decimal
// notation options a source may declare; it does no I/O.
package money
