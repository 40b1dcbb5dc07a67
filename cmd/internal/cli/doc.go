// Package cli holds what gridloupe's commands share on the command line:
// the usage error (exit status 2), help handling for a subcommand's flags
// and the mapping of an error to the process exit status. It is used by
// both executables, cmd/gridloupe and cmd/gridloupe-offline.
package cli
