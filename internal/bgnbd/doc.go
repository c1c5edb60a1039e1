// Package bgnbd fits the beta-geometric/negative binomial distribution
// (BG/NBD) model of repeat buying and scores customers with it.
//
// Reference (cited from memory): Fader, P. S., Hardie, B. G. S. & Lee, K. L.
// (2005), "'Counting your customers' the easy way: an alternative to the
// Pareto/NBD model", Marketing Science 24(2), 275–284.
//
// The model: while alive, a customer makes repeat purchases as a Poisson
// process with rate λ; after each repeat purchase the customer drops out
// for good with probability p. Across customers λ ~ Gamma(shape r, rate α)
// and p ~ Beta(a, b). The first purchase starts the clock and is not counted.
//
// Each customer is summarised by (x, t_x, T): x repeat purchases, the last
// at t_x after the first purchase, observed until T after the first
// purchase. In ebb a purchase is an order day and the unit of t_x, T, α and
// every horizon t is days, but the formulas are unit-free as long as one
// unit is used throughout (α is a time, r, a and b are pure numbers).
//
// The package is pure computation: no I/O, no clock, no randomness.
package bgnbd
