// Package store keeps gridloupe's data on the gateway's SD card in one bbolt
// file: the aggregated records (3 s, 10 min, 2 h), the record layout they
// were written with, alarm state, and the MQTT outbox. It computes no
// metrics and is the only package that imports go.etcd.io/bbolt.
//
// # File layout
//
// One bucket per aggregation level, named by the interval label ("3s",
// "10min", "2h"). A key is 16 bytes: the record's start as UnixNano
// (big-endian uint64), then a store sequence number (big-endian uint64,
// persisted, never reused), so cursor order is time order and a wall-clock
// step back never overwrites or reorders what is stored. Records before
// 1970 are rejected (their UnixNano would not sort as uint64).
//
// The "meta" bucket holds the record layouts (channel names, kinds and
// phases, orders, wiring, IL), each under a numeric layout id, and the
// persisted loss counters. Every record carries its layout id, so records
// written before a layout change stay decodable. The "alarms" bucket holds
// one AlarmState per alarm name. The outbox has one bucket per message
// class keyed by the 8-byte big-endian message sequence number; Pending
// merges them in sequence order.
//
// # Record encoding (version 2)
//
// A record is: version byte, layout id (uint16), start UnixNano (int64),
// duration in seconds (float64), samples (uvarint), flags (uint16), a
// presence byte, the frequency (float32) and the 10 s frequency when
// present; per channel a flags byte (pct/pct_il undefined), rms, dc, thd,
// thd_h50, tdd, tdd_h50, crest_factor (float32; the stored quantities of
// metrics/quantity in table order, crest_factor since version 3) and per configured order the rms
// (float32) and phase (int16 centi-degrees, −32768 = null); the phase count
// and per phase its letter and P, P1, Q1, S, S1, SN, DI, DV, SH, PF, DPF
// (float32); the totals (9 × float32, then P1⁺ and Q1⁺; version 1 lacks
// these two) when there are phases; the sequence
// components per order (3 × float32) for voltage and current when present;
// the two unbalance values (float32). Undefined magnitudes are float32 NaN.
// pct and pct_il are not stored: decode recomputes them from the rms values
// (pct = 100·rms/h1 rms, pct_il = 100·rms/IL). All numbers are big-endian.
//
// Byte budget: with 8 channels (va, vb, vc, ia, ib, ic, in and one more
// current), all 50 orders, three phases and both sequence sets a record is
// 4,053 bytes with the 10 s frequency (RecordBudget8Ch50 = 4,096 is the asserted ceiling); with the
// 17 orders of a typical 3 s configuration it is 1,677 bytes. Float32
// keeps about 7 significant digits (relative 6e-8); phases are rounded to
// 0.01°.
//
// # Size and wear
//
// The file is opened with NoFreelistSync and the hash-map freelist, so a
// commit writes only the touched pages and the meta page. The file never
// shrinks; retention and the size cap delete old records so that bbolt
// reuses the freed pages and the file stops growing. MaxSizeMB is also
// handed to bbolt as its hard limit, so a write that would grow the file
// past it fails (and is retried once after trimming) instead of growing.
//
// # Damage
//
// Open checks an existing file before bbolt walks it on goroutines of its
// own (where a fault or a failed assertion would end the process): the
// pages are read with ReadAt, each reachable page once, and checked for
// everything bbolt asserts (fsck.go), then bbolt's own check runs. Every
// transaction runs with debug.SetPanicOnFault and a recover. Damage is
// reported as ErrDamaged with the path.
//
// # Concurrency
//
// A DB is safe for concurrent use. Writes are serialised inside the DB (one
// writer at a time, as bbolt requires); reads run in bbolt read
// transactions beside them. bbolt allows one writer process: a second Open
// of the same file, in this process or another, waits for Options.Timeout
// and fails with ErrLocked.
package store
