package main

import (
	"flag"
	"fmt"
	"io"
	"runtime"
	"runtime/debug"

	"github.com/gridloupe/gridloupe/goertzel"
)

// version is set at build time with -ldflags "-X main.version=v1.2.3";
// otherwise the module version or "devel".
var version = ""

func cmdVersion(args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet("version", flag.ContinueOnError)
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "Usage: gridloupe version\n\nPrints the version, Go version, target platform and the Goertzel\nkernel this CPU runs (AVX2+FMA, NEON or pure Go).")
	}
	if err := parseFlags(fs, args, stdout); err != nil {
		return err
	}
	v, rev := version, ""
	if bi, ok := debug.ReadBuildInfo(); ok {
		if v == "" && bi.Main.Version != "" && bi.Main.Version != "(devel)" {
			v = bi.Main.Version
		}
		for _, s := range bi.Settings {
			if s.Key == "vcs.revision" && len(s.Value) >= 12 {
				rev = s.Value[:12]
			}
		}
	}
	if v == "" {
		v = "devel"
	}
	fmt.Fprintf(stdout, "gridloupe %s", v)
	if rev != "" {
		fmt.Fprintf(stdout, " (%s)", rev)
	}
	fmt.Fprintf(stdout, " %s %s/%s, Goertzel kernel %s\n", runtime.Version(), runtime.GOOS, runtime.GOARCH, goertzel.Kernel())
	return nil
}
