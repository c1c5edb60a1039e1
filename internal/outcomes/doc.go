// Package outcomes measures what happened after a list was drawn: how
// accurate it turned out to be, whether contacting customers changed their
// behaviour, whether the scored population has drifted since training, and
// how cohorts of customers keep ordering.
//
// Conventions: the outcome of a customer is "no reorder", true when they
// did not order again within the horizon H (the label of ebb's models). A
// rate is a share in [0, 1]; sentences show rates as whole percents and
// differences of rates in percentage points with one decimal. Invalid input
// returns a *problem.Error with a sentence a user can read; no function
// returns NaN.
//
// # Proportions and their difference
//
// One proportion x/n gets Wilson's (1927) score interval. The difference of
// two independent proportions p̂1 − p̂2 (in ebb: contacted minus holdout)
// gets Newcombe's (1998) hybrid score interval, his method 10, without
// continuity correction: with Wilson limits (l1, u1) and (l2, u2) and
// d = p̂1 − p̂2,
//
//	lower = d − √((p̂1 − l1)² + (u2 − p̂2)²)
//	upper = d + √((u1 − p̂1)² + (p̂2 − l2)²).
//
// Both stay sensible at 0/n and n/n, where the textbook Wald interval
// collapses to a point.
//
// # Detectable effect and power
//
// Before a holdout is relied on, MinDetectableEffect gives the smallest
// drop in the no-reorder rate that a two-sided test at level α detects with
// the given power, by the normal approximation without continuity
// correction (Fleiss, Statistical Methods for Rates and Proportions,
// the sample-size formula for comparing two independent proportions,
// solved here for the difference instead of n). For equal groups it agrees
// with R's power.prop.test (strict = FALSE).
//
// # Drift
//
// The Population Stability Index of a binned distribution with reference
// shares e_i and current shares a_i is
//
//	PSI = Σ (a_i − e_i)·ln(a_i / e_i) = KL(a‖e) + KL(e‖a),
//
// the symmetric Kullback–Leibler divergence, which Jeffreys (1946)
// introduced as a measure of how far apart two distributions are (Kullback
// & Leibler 1951). Bins are deciles of the reference (Hyndman & Fan 1996
// definition 7), right-closed; empty bins are smoothed (see PSI). The
// bands in Band (0.1 and 0.25) are an industry rule of thumb, common
// practice in credit scoring (e.g. Siddiqi 2006), not a statistical test.
//
// # Cohorts
//
// Retention tables count, at each month end, the share of a cohort
// (customers by month of first order) still active: an order day within
// the last X days. Time to lapse by cohort is estimated by Kaplan & Meier's
// (1958) product-limit estimator (package survival), since customers still
// active at data_through have not lapsed yet: their time is censored.
//
// # Sources
//
//   - Wilson, E. B. (1927). Probable inference, the law of succession, and
//     statistical inference. Journal of the American Statistical
//     Association 22(158), 209–212.
//   - Newcombe, R. G. (1998). Interval estimation for the difference between
//     independent proportions: comparison of eleven methods. Statistics in
//     Medicine 17(8), 873–890 (method 10).
//   - Fleiss, J. L., Levin, B. & Paik, M. C. (2003). Statistical Methods for
//     Rates and Proportions, 3rd ed. Wiley, chapter 4 (sample size for
//     comparing two proportions).
//   - Jeffreys, H. (1946). An invariant form for the prior probability in
//     estimation problems. Proceedings of the Royal Society A 186, 453–461;
//     Kullback, S. & Leibler, R. A. (1951). On information and sufficiency.
//     Annals of Mathematical Statistics 22(1), 79–86.
//   - Siddiqi, N. (2006). Credit Risk Scorecards. Wiley (the PSI bands).
//   - Kaplan, E. L. & Meier, P. (1958). Nonparametric estimation from
//     incomplete observations. Journal of the American Statistical
//     Association 53(282), 457–481.
//   - Hyndman, R. J. & Fan, Y. (1996). Sample quantiles in statistical
//     packages. The American Statistician 50(4), 361–365.
//
// The bibliographic details above are cited from memory. The formulas are
// checked in the tests against statsmodels 0.13.5 and R 4.2.2 output and
// the published worked examples (testdata/README.md).
package outcomes
