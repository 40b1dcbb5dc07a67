// Package wiringcheck judges a commissioning snapshot: from a few seconds'
// aggregate record it names, in plain language a technician acts on, what
// is wrong with the hook-up: the voltage rotation, a reversed CT, two CTs
// swapped between phases, a CT on the wrong phase, a dead channel, a
// voltage off its declared value, or a current too far from its voltage.
//
// The currents are judged by a search over every explanation (each current
// assigned to one phase voltage, either way round): the one that makes the
// phases' displacement angles most alike, within ±60° and near a lagging
// drive load, with the fewest changes from the configured hook-up, wins.
// Three-wire (delta) hook-ups compare currents with the phase voltages of
// the artificial neutral, (V_ab − V_ca)/3 and so on.
//
// The package holds rules only; it performs no I/O.
package wiringcheck
