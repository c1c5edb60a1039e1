// Package charts draws ebb's figures as SVG (and PNG for tests and
// downloads) with gonum.org/v1/plot v0.17.0.
//
// It draws Bars: one series of values over labelled categories, such as the
// orders, order days or new customers of each month of a dataset (from the
// store's version statistics). The y axis starts at 0 and has whole-number
// ticks when the values are counts; when there are more than twelve
// categories only every k-th label is shown, k from 2, 3, 4, 6, 12, 24, …
// so that month labels stay on the same months of the year (Bars.TickLabels).
//
// For the churn-window page it draws three more, all with optional
// Markers: labelled vertical lines such as "90th percentile 41 d" or
// "X = 45 d", whose labels stack in rows where they would overlap.
//
//   - Histogram: counts over bins the caller made (BinDays bins whole-day
//     gap lengths linearly, about 50 bins, or in quarter-octaves from 1
//     day), on a linear or logarithmic x axis.
//   - Steps: a right-continuous step function of a share, such as the
//     Kaplan–Meier repurchase curve F(t), with an optional confidence band,
//     on a 0–100 % y axis.
//   - Lines: several series over a common x, such as the share lapsed today
//     and the share returned after a lapse for each X from 1 to 365 days,
//     with a legend.
//
// Every chart refuses NaN, infinite or mismatched inputs with an error and
// then writes nothing.
//
// Charts are drawn from stored results only: a handler passes numbers it
// read from the store, never recomputes an analysis to draw a chart. Each
// chart is served as SVG at its own URL, and the page that links it shows
// the same numbers in a table (each chart's Rows), so a chart is never the
// only place a figure can be read.
//
// Text is set in the Go Liberation Sans font that gonum embeds, per plot
// (the package never changes plot.DefaultFont, which other code shares).
// The SVG names the font instead of embedding it: embedding would make
// each file about 550 KB (PLATFORM.md §3).
package charts
