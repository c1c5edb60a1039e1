// Package gaps derives the churn window X — the number of silent days after
// which a customer counts as lapsed — from the gaps between order days, in
// several ways, and shows what each choice of X costs.
//
// Methods (ebb's design, section "Churn window X"); all percentiles are
// Hyndman & Fan (1996) definition 7 and X is always rounded up to whole
// days. The look-back period L ends at data_through.
//
//   - mean-gap percentile, the common rule of thumb: customers with at least
//     two order days in L; each one's mean gap between consecutive order days
//     in L; the q-th percentile of those means. It sees only customers who
//     ordered twice in L, so it understates X for slow buyers.
//   - pooled-gap percentile: the q-th percentile of all consecutive gaps
//     between order days in L.
//   - censoring-aware: every gap that starts with an order day in L is an
//     episode, closed by the next order day, and each customer's open gap
//     since their last order day is censored at data_through. Kaplan &
//     Meier's (1958) estimator gives F(t), the share of episodes ended by a
//     reorder within t days. Because some customers never return, F does
//     not reach 1; with a cap τ, X is the smallest t with F(t) ≥ q·F(τ).
//     Its band comes from a bootstrap over customers (Efron & Tibshirani
//     1993), since one customer's episodes are not independent.
//   - second-order window: the same on first-to-second order gaps only, for
//     one-order customers, who reorder more slowly than repeat customers.
//
// The sensitivity table gives, for every X from 1 to 365, the share lapsed
// today, the share of lapse episodes followed by a return within W days
// (a low share means "lapsed" really means gone), and the median extra wait
// of those who returned, split by first-time and repeat customers.
//
// Citations of Hyndman & Fan, Kaplan & Meier and Efron & Tibshirani are
// from memory.
package gaps
