// Package survival estimates how long episodes last when some of them are
// still running: the Kaplan–Meier curve with Greenwood standard errors,
// pointwise confidence intervals, quantiles with their confidence limits,
// and the time at which the share of ended episodes first reaches a level.
//
// In ebb an episode is a gap between a customer's order days, ended by the
// next order (the event) or still open at data_through (censored). The
// churn window derivation reads F(t) = 1 − S(t), the share of gaps closed by
// a reorder within t days; cohort retention reads S itself.
//
// # Method
//
// With distinct event times t_1 < t_2 < …, d_j events at t_j and n_j
// episodes at risk at t_j (those whose time is ≥ t_j), the product-limit
// estimator of Kaplan & Meier (1958) is
//
//	S(t) = ∏_{t_j ≤ t} (1 − d_j/n_j),
//
// a right-continuous step function that is 1 before the first event time
// and steps only at event times. An episode censored at t_j is still at risk
// at t_j: at tied times events come before censorings, as in Kaplan & Meier
// and in R's survival package. When every episode at risk ends (d_j = n_j)
// S drops to 0; when the longest episode is censored S never reaches 0 and
// the curve is extended flat beyond it.
//
// Greenwood's (1926) formula estimates the variance of log S(t) by
//
//	G(t) = Σ_{t_j ≤ t} d_j / (n_j (n_j − d_j)),
//
// so the standard error of S(t) is S(t)·√G(t) (undefined, NaN, once
// d_j = n_j). Pointwise intervals at level 1 − α, with z the 1 − α/2 normal
// quantile, are built on a transformed scale and mapped back (R survfit's
// conf.type; Kalbfleisch & Prentice 1980):
//
//   - log (the default, as in R): S·exp(∓z√G), upper limit truncated at 1;
//   - log-log: an interval for log(−log S), i.e. S^exp(±z√G/|log S|), which
//     stays inside (0, 1);
//   - plain: S ∓ z·S√G, truncated to [0, 1].
//
// The p-quantile is the first event time at which S < 1 − p. When S sits
// exactly on 1 − p over a step (within √ε ≈ 1.49e-8), every time on the
// step qualifies and, following R survival's quantile.survfit, the midpoint
// of the step is taken. Its confidence limits are the times at which the
// lower and upper confidence curves reach 1 − p under the same rule: the
// inversion of the pointwise band that Brookmeyer & Crowley (1982) proposed
// for the median, computed as R does it (on the band of the chosen
// transformation). R has two routines for this, quantile.survfit and
// print.survfit, which differ in two corner cases; Quantile and QuantileCI
// document which one they follow there.
//
// # Performance
//
// Episode times in days are integers, so Builder and KaplanMeierDays count
// events and censorings per day and build the curve in O(n + longest time)
// without sorting; KaplanMeier accepts any non-negative float64 times and
// sorts, O(n log n). A Curve keeps one entry per distinct observed time.
//
// # Sources
//
//   - Kaplan, E. L. & Meier, P. (1958). Nonparametric estimation from
//     incomplete observations. Journal of the American Statistical
//     Association 53(282), 457–481.
//   - Greenwood, M. (1926). The natural duration of cancer. Reports on
//     Public Health and Medical Subjects 33. London: HMSO.
//   - Kalbfleisch, J. D. & Prentice, R. L. (1980). The Statistical Analysis
//     of Failure Time Data. New York: Wiley (the log-log interval).
//   - Brookmeyer, R. & Crowley, J. (1982). A confidence interval for the
//     median survival time. Biometrics 38(1), 29–41.
//   - Therneau, T. M. R package survival 3.5-3: the documentation of survfit,
//     survfit.object (conf.type) and quantile.survfit, whose code
//     (survfit_confint, findq) this package follows for the intervals and
//     the quantile rule.
//
// The bibliographic details above are cited from memory; the formulas are
// checked against R survival 3.5.3 output in the tests (testdata/README.md).
package survival
