package main

import (
	"errors"
	"fmt"
	"time"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/store"
)

// openWeek does what evaluate and report share: parse --from, check
// --timeout, load the config and open the store (--store, else
// store.path) read-only. name prefixes every message. The caller closes db.
func openWeek(name, cfgPath, dbPath, fromStr string, timeout time.Duration) (cfg *config.Config, db *store.DB, path string, from time.Time, err error) {
	if fromStr != "" {
		t, err := time.Parse(time.RFC3339Nano, fromStr)
		if err != nil {
			return nil, nil, "", from, usagef("%s: --from %q is not RFC 3339 (e.g. 2026-03-02T00:00:00Z)", name, fromStr)
		}
		from = t.UTC()
	}
	if timeout <= 0 {
		return nil, nil, "", from, usagef("%s: --timeout %v: must be positive", name, timeout)
	}
	cfg, err = config.Load(cfgPath)
	if err != nil {
		return nil, nil, "", from, &usageError{Err: err}
	}
	path = dbPath
	if path == "" {
		path = cfg.Store.Path
	}
	if path == "" {
		return nil, nil, "", from, usagef("%s: no --store given and %s has no store.path", name, cfg.Path)
	}
	db, err = store.OpenReadOnly(path, timeout)
	if errors.Is(err, store.ErrLocked) {
		return nil, nil, "", from, fmt.Errorf("%s: %w; %s", name, err, evalHeld)
	}
	if err != nil {
		return nil, nil, "", from, fmt.Errorf("%s: %w", name, err)
	}
	return cfg, db, path, from, nil
}
