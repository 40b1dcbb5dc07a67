package main

import (
	"strings"
	"testing"
)

// TestStoreCommandSpanErrors: export and events reject a --from or --to
// that is not RFC 3339 as a usage error naming the flag and the value
// (DESIGN "Errors and exit codes": usage errors exit 2, nothing on stdout).
func TestStoreCommandSpanErrors(t *testing.T) {
	db := t.TempDir() + "/none.db"
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"export", "--store", db, "--from", "yesterday"}, `export: --from "yesterday" is not RFC 3339`},
		{[]string{"export", "--store", db, "--to", "2026-03-01"}, `export: --to "2026-03-01" is not RFC 3339`},
		{[]string{"events", "--store", db, "--from", "monday"}, `events: --from "monday" is not RFC 3339`},
		{[]string{"events", "--store", db, "--to", "2026-13-01T00:00:00Z"}, `events: --to "2026-13-01T00:00:00Z" is not RFC 3339`},
	} {
		r := runCmd(c.args...)
		if r.code != 2 || r.stdout != "" || !strings.Contains(r.stderr, c.want) {
			t.Errorf("%v: exit %d, stdout %q, stderr %q; want 2, nothing on stdout, %q", c.args, r.code, r.stdout, r.stderr, c.want)
		}
	}
}
