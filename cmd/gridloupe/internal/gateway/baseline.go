package gateway

import (
	"encoding/json"

	"github.com/gridloupe/gridloupe/metrics/alarm"
)

// baselineJSON is the stored form of a rule's learned baseline; nil when
// the rule has none (not a baseline rule, or nothing learned yet).
func baselineJSON(l alarm.Learned) []byte {
	if l.From.IsZero() {
		return nil
	}
	b, err := json.Marshal(l)
	if err != nil {
		return nil // cannot happen: no NaN is ever learned (null values are held)
	}
	return b
}

// learnedFrom decodes a stored baseline; a damaged one is learned again.
func learnedFrom(b []byte) alarm.Learned {
	var l alarm.Learned
	if len(b) > 0 && json.Unmarshal(b, &l) != nil {
		return alarm.Learned{}
	}
	return l
}
