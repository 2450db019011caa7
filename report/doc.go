// Package report turns the history of hits into the answers an analyst
// needs before damping goes into a model: the scatter of every mode, whether
// a revision changed the damping, whether the damping drifts over a
// campaign, and Rayleigh coefficients with intervals that can be quoted.
//
// Everything here is a pure function over []db.Hit (as db.DB.Hits returns
// them) or over plain slices: no SQL, no files, no clocks. The commands
// stats, compare, trend, rayleigh and export of cmd/ringlog are thin shells
// around it.
//
// # Mode identity
//
// Identify gives every usable mode of every hit a label. A label already
// stored with the mode wins; otherwise the nearest expected mode of the
// configuration within its relative tolerance; without expected modes the
// frequencies of the history are clustered (log-frequency gaps wider than
// 5 %) and the clusters named m1, m2, ... in frequency order. A mode that
// matches no label is kept as unmatched and reported, never dropped.
// Rejected hits and dropped modes are counted by reason code.
//
// # Statistics
//
//   - Describe: n, mean, standard deviation (n-1), median, coefficient of
//     variation, 95 % interval of the mean (Student t), a percentile
//     bootstrap interval of the mean when n >= 10 (2000 resamples, fixed
//     seed, so the same data give the same interval).
//   - GeometricMean: exp of the mean of log values, with the Student t
//     interval of the mean log back-transformed: damping is positive and
//     skewed, so this is the interval to quote.
//   - Outliers: |x - median| > 3 * 1.4826 * MAD (the median absolute
//     deviation scaled to estimate a normal standard deviation). Outliers
//     are listed with their files, not removed.
//   - WelchTest: Welch's unequal-variance t test with the
//     Welch-Satterthwaite degrees of freedom; Compare applies it to log zeta
//     (ratio of geometric means) and to frequency (shift).
//   - LinearFit, MannKendallTest, SenSlope: trend over time.
//   - FitRayleigh: zeta(w) = alpha/(2w) + beta*w/2 (w in rad/s), closed form
//     for two modes (Chopra, Dynamics of Structures; Clough & Penzien,
//     Dynamics of Structures), weighted least squares with alpha, beta >= 0
//     for more, covariance and Monte Carlo intervals, the band of modes
//     the curve follows within their scatter, and a stiffness-only fit.
//     Each mode's weight is 1/SD^2 with SD^2 = max(s^2, h^2)/n: s the
//     hit-to-hit standard deviation of its damping ratio, h the root mean
//     square of the per-hit standard errors, n its hits. The scatter
//     already contains the estimation error, so the two are not added; the
//     larger is taken so that a few hits that happen to agree do not get
//     an unearned weight. The covariance (A^T W A)^-1 is scaled by
//     chi2/dof when that exceeds 1 (the modes scatter about the curve more
//     than their uncertainties allow), and its intervals then use Student
//     t with dof degrees of freedom.
//
// Cautions returns the warnings every coefficient output must carry.
package report
