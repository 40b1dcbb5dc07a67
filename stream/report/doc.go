// Package report renders the weekly report: one self-contained HTML file
// (inline CSS and SVG, no script, no external assets) that prints on A4.
// The caller gathers the figures (the IEEE 519 evaluation, spectra,
// trends, energy, diagnostics, events); this package only lays them out
// and draws the charts.
package report
