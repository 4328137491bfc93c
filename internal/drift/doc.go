// Package drift owns the tests that notice and date a change in a cost's
// behaviour (a lease renewed, a tariff changed): given a cost series y over
// consecutive periods and the model it follows, y = X·b + e with an
// intercept (the fixed part) and up to two drivers (the rates), it computes
//
//   - FStats: the Chow statistic for every candidate break, its supremum
//     (the Quandt–Andrews sup-F) and the period that attains it, which dates
//     the break;
//   - Chow: the Chow test at a given break with its exact F p-value;
//   - SupFPValue: the p-value of the sup-F, by residual bootstrap with a
//     fixed seed or by Hansen's (1997) approximation;
//   - SupFLevel and SupFLevelSignificant: the sup-F for a shift of the
//     level alone, the rates held common (Andrews 1993, partial structural
//     change with one coefficient changing), optionally by weighted least
//     squares for noise that grows with the cost, with its residual-
//     bootstrap p-value;
//   - OLSCUSUM and RecursiveCUSUM: the cumulative-sum fluctuation tests
//     with their p-values and boundaries;
//   - AndrewsCritical: Andrews' (2003) table of sup-F critical values.
//
// Every function takes slices and returns a result struct. The package does
// no I/O, reads no clock, writes no log and keeps no state between calls
// (a bootstrap's random draws come from the seed it is given). Fitting is
// delegated to internal/fit. Deciding what a break means for a cost object
// (re-fitting from the break on, the two-run rule against flapping) belongs
// to the analysis stage, not here.
//
// # Conventions
//
// n observations, k coefficients (intercept counted). A break i is the last
// observation of the first segment (strucchange's convention): observations
// 1..i (y[0:i]) follow the old behaviour, i+1..n (y[i:]) the new one. With
// trimming π (DefaultTrim = 0.15), candidates run from ⌊π·n⌋ to n − ⌊π·n⌋,
// with from raised to k+1 and to lowered to n−k−1 where needed, as
// strucchange's Fstats does (R/Fstats.R: from <- floor(from * n),
// to <- n - from, then the two clamps).
//
// # Statistics
//
// With RSS the residual sum of squares on all n observations and RSS1_i,
// RSS2_i those of separate fits to 1..i and i+1..n:
//
//	F_i   = (RSS − RSS1_i − RSS2_i) / ((RSS1_i + RSS2_i)/(n − 2k))   (Wald scale; F_i/k ~ F(k, n−2k) for fixed i)
//	sup-F = max_i F_i,   break = argmax_i F_i   (Quandt 1960, from memory; Andrews 1993)
//	ave-F = mean_i F_i,  exp-F = log mean_i exp(F_i/2)   (Andrews & Ploberger 1994, from memory)
//	Chow  = F_i/k at a given i,   p = Pr(F_{k, n−2k} > Chow)   (Chow 1960)
//
// OLS-CUSUM (Ploberger & Krämer 1992): B(i) = Σ_{t≤i} e_t/(σ̂√n) with e the
// no-break OLS residuals and σ̂² = RSS/(n − k); S0 = max|B(i)| has the
// Kolmogorov distribution, critical values 1.224, 1.358, 1.628 at 10, 5,
// 1 %. Recursive CUSUM (Brown, Durbin & Evans 1975): the scaled cumulated
// recursive residuals against the lines ±a(1 + 2t), a = 0.850, 0.948, 1.143.
// Each function's doc comment gives the exact scaling, which is
// strucchange's (Zeileis, Leisch, Hornik & Kleiber 2002, "strucchange: An R
// package for testing for structural change in linear regression models",
// Journal of Statistical Software 7(2), from memory).
//
// # p-values of the sup-F, and the product's defaults
//
// The sup-F is a maximum over dates chosen by the data, so the F(k, n−2k)
// p-value of a single Chow test does not apply to it. Two p-values are
// offered:
//
//   - Hansen: Hansen's (1997, JBES 15(1), 60–67) response-surface
//     approximation of the asymptotic distribution, exactly as strucchange's
//     sctest(type = "supF") computes it (the coefficients are embedded for
//     k = 1..3). It is asymptotic, and in 24–36 periods each F_i has only
//     n − 2k denominator degrees of freedom, so its tail is heavier than
//     the χ²-based limit and the approximation overstates significance.
//   - Bootstrap: the residual bootstrap under the no-break fit with B
//     replicates and a fixed seed. It simulates the statistic at the
//     sample's own n, k and trimming, so it holds in finite samples as far
//     as the residuals stand for the errors; for a fixed seed it is
//     deterministic.
//
// The product uses Method Bootstrap with DefaultReplicates (B = 999, so p
// is resolved to 0.001 and its Monte Carlo SD at p = 0.05 is about 0.007)
// and a break counts at DefaultLevel 0.05, with trimming DefaultTrim 0.15
// (at least ⌊0.15·n⌋ periods on each side, e.g. 5 of 36). The tests of this
// package measure it (bootstrap_test.go, 200 seeded series each, B = 999):
// on no-break series of 30 periods the bootstrap rejects at 5 % in 5.0 %
// (fixed cost) and 4.0 % (one driver) of them, Hansen's p-value in 6.5 %
// and 6.0 %; a 15 % level shift at 5 % noise in the middle of 30 periods
// is rejected in 100 %; and a break after period 19 of 36 is dated exactly
// in 84 % and within one period in 98 %. Hansen's p-value and
// AndrewsCritical are kept for reference and comparison with the
// literature. The Chow p-value at the dated break is exact only for a date
// fixed in advance and must not replace the sup-F p-value.
//
// # Computation
//
// FStats fits each pair of segments with internal/fit (n ≤ 60, k ≤ 3: a
// few hundred small fits). The bootstrap, which needs the sup-F of B
// series on the same design, gets every leading and trailing segment's RSS
// from one forward and one backward pass of Givens row updating of a QR
// factor (O(n·k²) per replicate); the tests check that both routes give the
// same sup-F to 1e-9.
//
// # Sources of the check values
//
// The tests compare with R's strucchange 1.5-3 (R 4.2.2, Debian bookworm)
// on the Nile series (strucchange's own saved test output) and on seeded
// series written by scripts/crosscheck/drift.R to testdata/crosscheck/
// drift.json; with Andrews' table (andrews2003_supwald_cv.csv, embedded
// here, source in andrews.go); with the Kolmogorov and Brown–Durbin–Evans
// critical values; and with simulations of size, power and dating.
//
// # Errors and panics
//
// Misuse (columns of the wrong length, a model with no coefficient, a
// trimming outside (0, 0.5), a break outside 1..n−1, a level outside
// (0, 1), negative replicates) panics with a message that starts "drift: ".
// Data the tests cannot be computed on return an error wrapping
// ErrTooFewObservations or ErrNoTable, or internal/fit's
// ErrIllConditioned (a regressor constant within a segment) and
// ErrNonFinite.
package drift
