// Package figure draws sweep records, and the model fitted to them, to
// image files (PNG, SVG, PDF) with gonum.org/v1/plot: the presentation of
// finished runs for a report or a paper, apart from the live screen of
// package tui.
//
// A figure stacks three panels over one frequency axis: the amplitude of
// the fundamental (up- and down-sweep points told apart by marker shape
// and colour, points that did not settle drawn hollow, the fitted response
// curve with its unstable middle branch dashed, the backbone, and arrows
// at the jumps the record saw), the harmonic ratios in per cent, and the
// phase of the fundamental. Several records on one figure get one colour
// each, for comparing drive levels.
//
// figure only reads what it is given and writes the one file it is asked
// for; it never fits (package acquire/report does) and never touches the
// terminal.
package figure
