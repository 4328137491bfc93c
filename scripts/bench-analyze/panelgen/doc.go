// Package panelgen builds an invented, seeded costdrift.Panel in memory for
// the analysis benchmark (scripts/bench-analyze and BenchmarkPanel in
// internal/analyze). The same Config gives the same panel, bit for bit, on
// every run and machine, so the Go timing and the Python comparisons read the
// same numbers.
//
// It owns only the generator: what the series look like is written on Build.
// It must not be used by the product, the demo or any test that asserts a
// computed value: the data are invented for timing, not a reference.
package panelgen
