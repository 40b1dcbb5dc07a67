// Command gridloupe-offline is the replay command of gridloupe on its own,
// for analysing recordings on a laptop or a small board: the same flags,
// output, warnings, errors and exit statuses as `gridloupe replay`, in an
// executable that links no network stack, store, MQTT client or broker,
// so that it starts and runs in about half the memory (README "Offline
// analysis"). See `gridloupe-offline --help`.
package main
