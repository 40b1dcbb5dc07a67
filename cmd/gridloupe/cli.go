package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"

	"github.com/gridloupe/gridloupe/cmd/internal/cli"
	"github.com/gridloupe/gridloupe/cmd/internal/replaycmd"
)

// The command-line helpers shared with the offline executable live in
// cmd/internal/cli; these are their local names.
type usageError = cli.UsageError

func usagef(format string, a ...any) error { return cli.Usagef(format, a...) }

var errHelp = cli.ErrHelp

func exitCode(err error) int { return cli.ExitCode(err) }

const rootHelp = `gridloupe: streaming power-quality analysis for motor-drive cabinets

Usage:
  gridloupe <command> [flags]

Commands:
  demo        run the whole gateway for a minute on a simulated drive cabinet:
              simulator, embedded MQTT broker, store in a temporary folder,
              live table, alarms raised and cleared
  run         run the gateway unattended (source, store, alarms, MQTT) until
              SIGINT or SIGTERM
  export      print stored 3 s, 10 min or 2 h aggregates (JSON Lines, CSV or
              tables)
  events      list the stored voltage dips, swells and interruptions
  waveform    draw one stored event's waveform capture as an SVG
  evaluate    judge a stored week against the IEEE 519-2014 harmonic limits
  replay      analyse a recording (CSV, WAV, COMTRADE or raw PCM) and print
              one record per window or aggregation interval
  simulate    write a recording of the built-in drive-cabinet simulator (CSV)
  wiring      check a hook-up on site: rotation, reversed, swapped or
              misplaced CTs, dead channels, voltages off nominal;
              plain-language findings
  calibrate   compare a few seconds with a reference instrument's readings
              and print corrected scale and delay_us lines for the config
  modbus-map  print the Modbus TCP register map of a config (CSV) for a BMS
  report      write the weekly report of a stored week as one HTML file with
              charts
  config      print the documented defaults of every config key, or check a
              file
  version     print the version, build and Goertzel kernel

Run 'gridloupe <command> --help' for a command's flags.

Safety: connecting sensors to live conductors can kill. Installation is work for
qualified personnel under local electrical codes, with rated voltage sensors and
CTs of the right measurement category (CAT III or better in a drive cabinet).
Never open-circuit the secondary of a loaded CT. gridloupe monitors; it is not
a protective device.
`

// run is the whole program behind main, callable from tests.
func run(ctx context.Context, args []string, stdin io.Reader, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		fmt.Fprint(stderr, rootHelp)
		return usagef("no command given")
	}
	cmd, rest := args[0], args[1:]
	var err error
	switch cmd {
	case "-h", "-help", "--help", "help":
		fmt.Fprint(stdout, rootHelp)
		return nil
	case "replay":
		err = replaycmd.Run(ctx, "gridloupe replay", rest, stdin, stdout, stderr)
	case "config":
		err = cmdConfig(rest, stdout, stderr)
	case "run":
		err = cmdRun(ctx, rest, stdout, stderr)
	case "demo":
		err = cmdDemo(ctx, rest, stdout, stderr)
	case "export":
		err = cmdExport(rest, stdout, stderr)
	case "evaluate":
		err = cmdEvaluate(rest, stdout, stderr)
	case "events":
		err = cmdEvents(rest, stdout, stderr)
	case "waveform":
		err = cmdWaveform(rest, stdout, stderr)
	case "simulate":
		err = cmdSimulate(ctx, rest, stdout, stderr)
	case "wiring":
		err = cmdWiring(ctx, rest, stdout, stderr)
	case "calibrate":
		err = cmdCalibrate(ctx, rest, stdout, stderr)
	case "modbus-map":
		err = cmdModbusMap(rest, stdout)
	case "report":
		err = cmdReport(rest, stdout)
	case "version", "--version", "-version":
		err = cmdVersion(rest, stdout)
	default:
		fmt.Fprint(stderr, rootHelp)
		return usagef("unknown command %q (commands: demo, run, export, events, waveform, evaluate, replay, simulate, modbus-map, report, wiring, calibrate, config, version)", cmd)
	}
	if errors.Is(err, errHelp) {
		return nil
	}
	return err
}

func parseFlags(fs *flag.FlagSet, args []string, stdout io.Writer) error {
	return cli.ParseFlags(fs, args, stdout)
}
