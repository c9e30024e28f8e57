// Package report draws the morning report: one period of one chamber
// (every pressure gauge on a log axis, temperatures below on the same time
// axis, alarm periods shaded and named, hold tests marked) with a header of
// the numbers a person checks first. It writes HTML (one self-contained
// file with the plot inline as SVG), SVG, PNG or PDF.
//
// report is pure: it takes a Night that the daemon gathered and must not
// read the store, the config or the clock.
package report
