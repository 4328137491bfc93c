// Package costdrift holds the domain of the product: the nouns that every
// stage of the data flow shares (ledger line, activity value, cost object,
// fit, behaviour) and nothing else.
//
// It owns no I/O, no database and no statistics. The stages (sources, the
// SQLite store, the analysis, the report) each live in their own package,
// exchange these types, and never import one another; only cmd/costdrift
// wires them together.
package costdrift
