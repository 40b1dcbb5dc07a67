package alarm

import "errors"

// ErrRule reports a rule with a missing name, an invalid level, threshold,
// deadband, delay or minimum load.
var ErrRule = errors.New("alarm: invalid rule")

// ErrDuplicate reports two rules with the same name.
var ErrDuplicate = errors.New("alarm: duplicate rule name")

// ErrMetric reports a metric name the evaluator does not know.
var ErrMetric = errors.New("alarm: unknown metric")

// ErrTarget reports a rule whose channel, phase, harmonic or load channels
// do not fit the metric or the setup (for example pct_il on a voltage, h50
// metrics without all orders, a harmonic order that is not computed).
var ErrTarget = errors.New("alarm: invalid target")

// ErrSetup reports a nil setup.
var ErrSetup = errors.New("alarm: no setup")
