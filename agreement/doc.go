// Package agreement measures how far assessors agree when they grade the
// same pairs on an ordinal scale 0..K-1, and derives consensus grades.
//
// Input is a set of judgments (item, rater, grade) collected in a Data.
// Items may have any number of raters and raters any number of items;
// "cannot judge" outcomes are simply not added. From a Data the package
// computes Cohen's kappa for every pair of raters (unweighted, linear and
// quadratic weights, with Fleiss-Cohen-Everitt standard errors), Fleiss'
// kappa with the Fleiss-Nee-Landis null standard error, Krippendorff's
// alpha for the nominal, ordinal, interval and ratio metrics, bootstrap
// intervals, raw and adjacent agreement, per-rater figures and per-item
// consensus (median, majority, mean, Dawid-Skene).
//
// A figure that cannot be computed (one grade used by everyone, fewer than
// two raters, no shared items) is a Value with OK false and a reason; it
// encodes as JSON null. Nothing here panics on degenerate data or returns
// a bare NaN.
//
// Grades are used as numbers where a metric needs numbers: the interval and
// ratio metrics of alpha, linear and quadratic kappa weights, the mean
// consensus and mean absolute errors all use the grade value itself.
package agreement
