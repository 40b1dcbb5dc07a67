// Command gridloupe is a streaming power-quality analyzer for motor-drive
// cabinets. See `gridloupe --help` and the README.
package main
