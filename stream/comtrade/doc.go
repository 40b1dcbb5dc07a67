// Package comtrade reads COMTRADE recordings (IEEE C37.111-1999 and
// -2013, IEC 60255-24): the .cfg file that describes the channels, rates
// and time stamps, and the .dat file beside it in ASCII, BINARY (16-bit),
// BINARY32 or FLOAT32 form. It delivers the chosen analog channels as
// frames of primary values (a·x + b, times primary/secondary when a
// channel is recorded in secondary units), for stream's pipeline. Parsing
// is kept apart from I/O: ParseConfig works on bytes. It imports stream
// only for its interfaces and holds no electrical rules.
package comtrade
