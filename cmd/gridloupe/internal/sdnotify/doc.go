// Package sdnotify sends service manager notifications (READY=1,
// WATCHDOG=1, STOPPING=1, STATUS=…) as one datagram to the socket named in
// $NOTIFY_SOCKET, in pure Go (no cgo, no libsystemd). Without the variable
// every call is a no-op, so the daemon runs the same outside a unit.
package sdnotify
