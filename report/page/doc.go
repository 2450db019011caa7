// Package page writes the reports people look at: the daily summary of a
// test bay and the comparison of two revisions, each one self-contained
// HTML file, and the plot of a single hit as an SVG file.
//
// A page is one file with its CSS inline and its plots inline as SVG. It
// has no script, no font file, no image file and no link to anything
// outside itself: it reads the same from a mail attachment, a network
// share or a printout. The print stylesheet uses the paper the browser is
// set to (A4 or Letter) with margins that fit both, and keeps figures and
// tables on one page.
//
// Everything that comes from a file name, the metadata or the
// configuration is escaped (html/template for the page; the SVG writer of
// gonum.org/v1/plot escapes the text it draws).
//
// The numbers come from package report (Identify, Stats, Compare,
// RayleighFor, Cautions); this package only arranges and draws them.
//
// The decay plot of a flagged or rejected hit re-reads the hit's file from
// the path the history stored (or a duplicate's path), checks that its
// SHA-256 is the recorded one, and draws the record with the envelope of
// the stored modes: frequencies and damping ratios as the history holds
// them, amplitudes and phases fitted to the record by linear least squares
// (the history keeps neither the phases nor the onset; the onset is taken
// at the end of the force pulse, or at the response's peak). An envelope
// that does not follow its record shows at a glance that the stored
// damping does not describe the hit. A file that is gone or whose content
// changed is named instead of plotted.
//
// Plots are drawn with gonum.org/v1/plot into SVG (vg/vgsvg). Long
// records are reduced to the minimum and the maximum of each pixel
// column, so a plot has a few hundred points whatever the record length,
// and a day of 200 hits stays well under 3 MB.
package page
