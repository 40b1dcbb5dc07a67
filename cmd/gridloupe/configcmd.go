package main

import (
	"flag"
	"fmt"
	"io"

	"github.com/gridloupe/gridloupe/config"
)

func cmdConfig(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("config", flag.ContinueOnError)
	defaults := fs.Bool("defaults", false, "print every config key with its default and allowed values")
	check := fs.String("check", "", "validate a config `FILE` and report the first problem with its line")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "Usage: gridloupe config --defaults | --check FILE\n\nFlags:")
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, stdout); err != nil {
		return err
	}
	switch {
	case *defaults:
		_, err := io.WriteString(stdout, config.Defaults())
		return err
	case *check != "":
		cfg, err := config.Load(*check)
		if err != nil {
			return &usageError{err}
		}
		fmt.Fprintf(stdout, "%s: ok (%d channels, wiring %s, %v Hz)\n", *check, len(cfg.Channels), cfg.Wiring, cfg.Nominal.FrequencyHz)
		return nil
	}
	fs.SetOutput(stderr)
	fs.Usage()
	return usagef("config: give --defaults or --check FILE")
}
