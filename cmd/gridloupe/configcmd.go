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
		fmt.Fprintln(fs.Output(), "Usage: gridloupe config --defaults | --check FILE\n\n--check validates the file as run reads it: keys, values, the sample rate\nfor the computed orders, and the files it names (mqtt.password_file, TLS\nfiles, a csv or wav source) exist and are readable, and that with circuits\nthe MQTT summary's circuits fit its 1 KB. A file without alarm\nrules also gets the usual starting rules for its channels, as YAML to paste.\nGive one of the two.\n\nFlags:")
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, stdout); err != nil {
		return err
	}
	switch {
	case *defaults && *check != "":
		return usagef("config: give either --defaults or --check FILE, not both")
	case *defaults:
		_, err := io.WriteString(stdout, config.Defaults())
		return err
	case *check != "":
		cfg, err := config.Load(*check)
		if err != nil {
			return &usageError{Err: err}
		}
		if err := preflight(cfg); err != nil {
			return err
		}
		if _, err := io.WriteString(stdout, preflightMessage(*check, cfg)); err != nil {
			return err
		}
		hint, err := suggestAlarms(cfg)
		if err != nil || hint == "" {
			return err
		}
		_, err = io.WriteString(stdout, hint)
		return err
	}
	fs.SetOutput(stderr)
	fs.Usage()
	return usagef("config: give --defaults or --check FILE")
}
