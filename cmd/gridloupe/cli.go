package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"strings"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/stream/input"
)

// usageError marks errors that exit with status 2: bad flags, bad config,
// unreadable input headers.
type usageError struct{ err error }

func (e *usageError) Error() string { return e.err.Error() }
func (e *usageError) Unwrap() error { return e.err }

func usagef(format string, a ...any) error { return &usageError{fmt.Errorf(format, a...)} }

// errHelp is returned after printing help: exit 0.
var errHelp = errors.New("help requested")

// exitCode maps an error to the process exit status of DESIGN's table:
// 2 for usage, config and input-header errors, 1 for everything else.
func exitCode(err error) int {
	var ue *usageError
	switch {
	case err == nil, errors.Is(err, errHelp):
		return 0
	case errors.As(err, &ue), errors.Is(err, config.ErrInvalid), errors.Is(err, input.ErrHeader):
		return 2
	}
	return 1
}

const rootHelp = `gridloupe: streaming power-quality analysis for motor-drive cabinets

Usage:
  gridloupe <command> [flags]

Commands:
  demo      run the whole gateway for a minute on a simulated drive cabinet:
            simulator, embedded MQTT broker, store in a temporary folder,
            live table, alarms raised and cleared
  run       run the gateway unattended (source, store, alarms, MQTT) until
            SIGINT or SIGTERM
  export    print stored 3 s, 10 min or 2 h aggregates (CSV or JSON Lines)
  events    list the stored voltage dips, swells and interruptions
  waveform  draw one stored event's waveform capture as an SVG
  evaluate  judge a stored week against the IEEE 519-2014 harmonic limits
  replay    analyse a recorded waveform file (CSV or WAV) and print one record
            per window or aggregation interval
  simulate  write a recording of the built-in drive-cabinet simulator (CSV)
  wiring    check a hook-up on site: rotation, reversed, swapped or misplaced
            CTs, dead channels, voltages off nominal; plain-language findings
  calibrate compare a few seconds with a reference instrument's readings and
            print corrected scale and delay_us lines for the config
  modbus-map  print the Modbus TCP register map of a config (CSV) for a BMS
  report    write the weekly report of a stored week as one HTML file with charts
  config    print the documented defaults of every config key, or check a file
  version   print the version and build information

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
		err = cmdReplay(ctx, rest, stdin, stdout, stderr)
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

// parseFlags parses a subcommand's flags, turning flag errors into usage
// errors and -h into errHelp (help text goes to stdout).
func parseFlags(fs *flag.FlagSet, args []string, stdout io.Writer) error {
	var msg strings.Builder
	fs.SetOutput(&msg)
	err := fs.Parse(args)
	if errors.Is(err, flag.ErrHelp) {
		fs.SetOutput(stdout)
		fs.Usage()
		return errHelp
	}
	if err != nil {
		return usagef("%s: %v", fs.Name(), err)
	}
	return nil
}
