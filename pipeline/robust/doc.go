// Package robust holds the order statistics that the estimators, the
// quality rules and the history statistics share: selection of the k-th
// smallest value in expected linear time and the median built on it.
// Long records (a million force samples) and long histories (all pair
// slopes of a trend) need a median without a full sort.
package robust
