//go:build !race

package mqtt_test

const raceEnabled = false
