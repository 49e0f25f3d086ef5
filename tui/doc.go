// Package tui is parch's live dashboard (bubbletea): the moisture curve and
// the drying rate as terminal charts, the figures that matter during a run,
// the source's state, alerts, and notes tagged as they happen.
//
// It computes nothing itself: numbers come from the kinetics package (Live
// for each new reading, Analyze in the background on a schedule). Readings
// arrive as batches on a channel read by a command that re-arms itself;
// notes and setup go to the session log through a NoteSink in a command, so
// Update and View do no I/O.
package tui
