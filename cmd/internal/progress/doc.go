// Package progress draws replay's one-line progress display on a terminal:
// an io.Writer that counts the bytes passing a TeeReader toward a known
// total and redraws name, share read, MiB read and rate and time left, at
// most five times a second, allocating nothing per redraw. Both
// executables use it (gridloupe replay and gridloupe-offline).
package progress
