// Package analysis holds ebb's use cases: each job kind (import, and later
// window derivation, training, scoring, measuring) as one function that
// wires the store to the domain packages. The web server runs them as jobs
// and the command line calls them directly, so both behave the same.
package analysis
