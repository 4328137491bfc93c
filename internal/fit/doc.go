// Package fit owns the least-squares arithmetic that costdrift's cost-behaviour
// classification rests on: ordinary least squares of an account's cost on one or
// more activity drivers, the straight line y = a + b·x, the line through the
// origin y = b·x, the constant y = a, and the high-low estimate.
//
// Every function takes slices and returns a result struct. The package does no
// I/O, keeps no state between calls, reads no clock and writes no log; deciding
// what a fitted coefficient means for an account (fixed, variable, mixed, step)
// belongs to the classification stage, not here.
//
// # Model and statistics
//
// For observations i = 1..N with k coefficients the model is
//
//	y_i = b_0 + b_1·x_1i + … + b_p·x_pi + e_i      (with intercept, k = p+1)
//	y_i =       b_1·x_1i + … + b_p·x_pi + e_i      (without, k = p)
//
// and the fit minimises RSS = Σ e_i². From it:
//
//	DF         = N − k
//	s²         = RSS / DF,  ResidualSE = s
//	StdErr_j   = s · sqrt([(XᵀX)⁻¹]_jj)
//	T_j        = Coef_j / StdErr_j
//	P_j        = 2 · Pr(T_DF > |T_j|)                  (Student t, two-sided)
//	R²         = 1 − RSS / Σ(y_i − ȳ)²                 (with intercept: centred)
//	R²         = 1 − RSS / Σ y_i²                      (without intercept: uncentred)
//	adj. R²    = 1 − (1 − R²)·(N − i)/DF,   i = 1 with intercept, 0 without
//	F          = ((TSS − RSS)/(k − i)) / s²,  FP = Pr(F_{k−i, DF} > F)
//	h_i        = x_iᵀ (XᵀX)⁻¹ x_i                      (leverage)
//	D_i        = e_i² h_i / (k s² (1 − h_i)²)          (Cook's distance)
//	PRESS      = Σ (e_i / (1 − h_i))²
//
// where TSS is the centred Σ(y_i − ȳ)² with an intercept and the uncentred Σ y_i²
// without one, the convention the NIST StRD certified values use for models
// through the origin.
//
// # Numerical method
//
// OLS centres each regressor on its mean when the model has an intercept (the
// intercept is then recovered as b_0 = ȳ_fit − Σ b_j·x̄_j), scales every column of
// the design matrix to unit Euclidean length, and factorises the scaled matrix
// augmented with y by Householder QR (gonum mat.QR): [X y] = Q·[R c; 0 ρ]. The
// coefficients solve R·b = c and RSS = ρ², so XᵀX is never formed. Centring
// removes the near-collinearity between the intercept and a regressor far from
// zero (a calendar year, say); on the NIST Longley data it gains about 2.7
// digits over factorising the raw scaled columns. Line,
// ThroughOrigin and Constant use closed forms with centred two-pass sums and
// allocate no matrices, because a run calls them hundreds of thousands of times.
//
// # Errors and panics
//
// Misuse (slices of different lengths, a Predict with the wrong number of
// regressor values) panics with a message that starts "fit: ". Numerical trouble
// is returned as an error that wraps one of ErrTooFewObservations,
// ErrIllConditioned or ErrNonFinite, so callers can skip the account and carry on.
package fit
