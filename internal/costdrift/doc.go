// Package costdrift holds the domain of the product: the nouns that every
// stage of the data flow shares (ledger line, activity value, cost object,
// fit, behaviour and its prediction terms, analysis settings, alert and its
// evidence, budget and variance lines) and nothing else.
//
// It owns no I/O, no database and no statistics, and imports no other
// package of the product but money. The stages (sources, the SQLite store,
// the analysis, alerts, budget, report, mail) each live in their own
// package, exchange these types, and never import one another; they may
// use the leaf libraries (money, calendar, atomicfile, and fit and drift
// for the analysis and the budget). Only cmd/costdrift, and the
// application layer it calls, wire them together. imports_test.go checks
// the rule on every package under internal/.
package costdrift
