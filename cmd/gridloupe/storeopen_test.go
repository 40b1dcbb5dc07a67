package main

import (
	"path/filepath"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/store"
)

// TestSimStartAfterAlarms: after a kill, an accelerated simulator resumes
// no earlier than the newest alarm transition, which commits at once and
// can lie beyond the last committed batch of records (README, MQTT topics:
// an alarm's time is when its condition was met; times never go back).
func TestSimStartAfterAlarms(t *testing.T) {
	db, err := store.Open(store.Options{Path: filepath.Join(t.TempDir(), "gl.db"), NoSync: true})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	wall := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	if got := simStart(db, wall); !got.Equal(wall) {
		t.Errorf("empty store: %v, want the wall clock %v", got, wall)
	}
	raised := wall.Add(47 * time.Minute)
	pending := wall.Add(52 * time.Minute)
	if err := db.SetAlarmState(store.AlarmState{Name: "tdd-ia", Raised: true, Since: raised}); err != nil {
		t.Fatal(err)
	}
	if err := db.SetAlarmState(store.AlarmState{Name: "thd-va", Pending: true, PendingSince: pending}); err != nil {
		t.Fatal(err)
	}
	if got := simStart(db, wall); !got.Equal(pending) {
		t.Errorf("simStart %v, want the newest alarm time %v", got, pending)
	}
}
