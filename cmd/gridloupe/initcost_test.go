package main

import (
	"bufio"
	"bytes"
	"os"
	"os/exec"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// initBytes is the most heap a package of this module may allocate at
// program start (the project's own bound: about 2x the largest today,
// stream/encode's 1.3 KB). Every command pays package initialisation,
// so tables and templates are built on first use. config, another
// helper's package, allocates 12 KB (section tables, a regexp): its bound
// is 2x that.
const initBytes = 3 << 10

var initBytesOf = map[string]int{
	"github.com/gridloupe/gridloupe/config": 24 << 10,
	// The package under test: its count includes the test files' variables.
	"github.com/gridloupe/gridloupe/cmd/gridloupe": 1 << 20,
}

var initLine = regexp.MustCompile(`^init (\S+) @.* clock, (\d+) bytes, (\d+) allocs$`)

// TestInitCost runs the command (this test binary as main) with
// GODEBUG=inittrace=1, which prints each package's initialisation cost
// (runtime package documentation), and holds each of this module's
// packages to its bound.
func TestInitCost(t *testing.T) {
	cmd := exec.Command(os.Args[0], "--help")
	cmd.Env = append(os.Environ(), "GRIDLOUPE_AS_MAIN=1", "GODEBUG=inittrace=1")
	var stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = nil, &stderr
	if err := cmd.Run(); err != nil {
		t.Fatalf("gridloupe --help: %v\n%s", err, stderr.String())
	}
	seen := 0
	sc := bufio.NewScanner(&stderr)
	for sc.Scan() {
		m := initLine.FindStringSubmatch(sc.Text())
		if m == nil || !strings.HasPrefix(m[1], "github.com/gridloupe/gridloupe") {
			continue
		}
		seen++
		n, _ := strconv.Atoi(m[2])
		limit, ok := initBytesOf[m[1]]
		if !ok {
			limit = initBytes
		}
		if n > limit {
			t.Errorf("%s allocates %d bytes at initialisation (%s allocs), over its bound of %d: build it on first use", m[1], n, m[3], limit)
		}
	}
	if seen == 0 {
		t.Fatalf("no init lines of this module in the trace:\n%.2000s", stderr.String())
	}
}
