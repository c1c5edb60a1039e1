// Package snapshots turns an order history into training rows that cannot
// see the future.
//
// A snapshot date t is a day on which the analysis pretends to stand: every
// customer active at t (recency below the churn window X) becomes a row,
// its features read only order days on or before t, and its label is 1 when
// the customer has no order day in (t, t+H] ("did not order again within H
// days"). A date is labelled only when t + H ≤ data_through.
//
// Dates are drawn at random, seeded, over [first order day + 365,
// data_through − H], so that the 365-day features are never truncated and
// no date is systematically a Monday. The split is by time, never shuffled:
// the last 30% of dates are the test period, the last 20% of the earlier
// ones the validation slice, and an embargo of H days separates train from
// validation and validation from test, so no label window reaches into the
// next period (the purged, embargoed split of López de Prado, "Advances in
// Financial Machine Learning", 2018, ch. 7, cited from memory).
package snapshots
