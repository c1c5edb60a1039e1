// Package evaluate measures how well a churn model's scores rank and
// predict the label "did not order again within the horizon H".
//
// Conventions used throughout:
//   - label true (1) is the positive class: the customer did not order
//     again within H; a higher score means more likely label 1;
//   - precision is, of the customers on a list, the share with label 1;
//     recall is, of all label-1 customers, the share on the list;
//   - a customer is "flagged at threshold t" when score ≥ t (the convention
//     of scikit-learn's precision_recall_curve and roc_curve);
//   - tied scores are never ordered by input order: ranking metrics treat a
//     tie group as one step (ROC AUC counts a positive–negative tie as ½,
//     the Mann–Whitney statistic), and lists cut inside a tie group use a
//     caller-supplied tie-break key (a keyed hash of the customer), smaller
//     key first.
//
// Invalid input (no rows, NaN scores, a single class where a metric needs
// both) returns a *problem.Error with a sentence a user can read; no
// function returns NaN.
package evaluate
