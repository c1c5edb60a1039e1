// Package lists turns scored customers into an at-risk list marketing can
// send: risk bands, a customer-level holdout, the selection rule, reasons in
// plain words, the change from the previous list, and the export files.
//
// Scores are calibrated probabilities that an active customer does not
// order again within the horizon H ("0.7" means 7 in 10). The package
// computes no score and no contribution: the model package scores and
// attributes (path-based contributions for trees, the method of A. Saabas,
// "Interpreting random forests", 2014, and its treeinterpreter package;
// coefficient × standardized deviation for logistic regression), and this
// package only groups those contributions into families and words them.
//
// # Holdout
//
// The holdout is a randomized control group: a random share of the
// contactable customers is withheld from the outreach, so that comparing
// contacted and withheld customers selected in the same week measures what
// the campaign did, and so that the withheld customers show how accurate the
// list was without treatment (R. Kohavi, D. Tang and Y. Xu, "Trustworthy
// Online Controlled Experiments", 2020, on randomized control groups and
// hash-based assignment; cited from memory). Membership is drawn per
// customer and holdout period, not per list: a keyed hash, HMAC-SHA256
// (RFC 2104; SHA-256 from FIPS 180-4) keyed with the dataset's secret salt,
// of the customer key and the period number. A keyed hash makes the draw
// repeatable (the same customer is in or out on every list of a period)
// without storing it, impossible to predict or steer from a customer id
// without the salt, and independent from one period to the next. Periods are
// whole weeks of at least H days counted from the fixed Monday 2001-01-01,
// so every list of a dataset sees the same periods.
//
// # Export
//
// CSV exports follow RFC 4180 (Y. Shafranovich, "Common Format and MIME
// Type for Comma-Separated Values (CSV) Files", 2005): UTF-8, CRLF line
// ends, fields quoted when they hold a comma, a quote or a line break.
// Because a spreadsheet runs a cell that starts with =, +, -, @, a tab or a
// carriage return as a formula, every cell that starts with one of them is
// prefixed with a single quote, as the OWASP page "CSV Injection"
// (https://owasp.org/www-community/attacks/CSV_Injection) recommends.
package lists
