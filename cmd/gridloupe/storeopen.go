package main

import (
	"errors"
	"fmt"
	"log/slog"
	"os"
	"time"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/store"
)

// asideLayout names a damaged file set aside: <path>.damaged-<UTC time>.
const asideLayout = "20060102T150405Z"

// openRunStore opens the daemon's store. A damaged file (store.ErrDamaged)
// is renamed to <path>.damaged-<UTC time> and a fresh store started in its
// place, so an unattended gateway keeps measuring after a power-loss
// corruption; with store.on_damage: fail the error is returned instead.
// notice says what was set aside ("" = nothing), for the log, the retained
// status and the next health message.
func openRunStore(opts store.Options, onDamage string, now time.Time, log *slog.Logger) (db *store.DB, notice string, err error) {
	db, err = store.Open(opts)
	if err == nil || !errors.Is(err, store.ErrDamaged) || onDamage == config.OnDamageFail {
		return db, "", err
	}
	aside := opts.Path + ".damaged-" + now.UTC().Format(asideLayout)
	if rerr := os.Rename(opts.Path, aside); rerr != nil {
		return nil, "", errors.Join(err, fmt.Errorf("store: setting the damaged file aside: %w", rerr))
	}
	db, ferr := store.Open(opts)
	if ferr != nil {
		return nil, "", errors.Join(err, fmt.Errorf("store: fresh store after setting %s aside: %w", aside, ferr))
	}
	notice = fmt.Sprintf("damaged store set aside as %s; measuring into a fresh store (%v)", aside, err)
	log.Error("store: "+notice, "set_aside", aside)
	return db, notice, nil
}

// afterAlarms returns t, or the newest time in the stored alarm states if
// that is later.
func afterAlarms(db *store.DB, t time.Time) time.Time {
	states, err := db.AlarmStates()
	if err != nil {
		return t
	}
	for _, st := range states {
		for _, at := range []time.Time{st.Since, st.PendingSince} {
			if at.After(t) {
				t = at
			}
		}
	}
	return t
}
