// Package oscillator makes test recordings of one mode with non-viscous
// damping by integrating its equation of motion in the time domain:
//
//	m x'' + c x' + c2 x'|x'| + c3 x'^3 + F sign(x') + k x = 0
//
// (viscous, quadratic, cubic and Coulomb friction damping), started by an
// impulse (x = 0, x' = v0) with the classical fourth-order Runge-Kutta
// method at a step much smaller than the sample interval. It shares no
// code with the estimators of pipeline/modal, so tests that compare what
// the estimators recover from these records with the textbook
// equivalent-viscous damping test the estimators against something outside
// them.
package oscillator
