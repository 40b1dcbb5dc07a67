// Package alarm evaluates alarm rules against aggregated records: each rule
// compares one metric of one channel, phase or the three-phase total with a
// threshold, with a deadband (hysteresis) and on/off delays counted in
// sample time, and reports every raise and clear as a Transition. Rules on
// metric event watch voltage events instead (event.go).
//
// Evaluation is pure: the package does no I/O, talks to no network and
// stores nothing. Its State values are JSON-serialisable so that the store
// can persist them and a restarted daemon resumes where it stopped. It
// imports the standard library, metrics, metrics/events,
// metrics/quantity and metrics/limits; not config.
package alarm
