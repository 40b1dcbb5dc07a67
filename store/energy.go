package store

import (
	"encoding/binary"
	"fmt"
	"math"
	"time"

	bolt "go.etcd.io/bbolt"
)

// Buckets of the energy counters and monthly demand maxima, created on
// first write.
var (
	bktEnergy = []byte("energy")
	bktDemand = []byte("demand_months")
)

// energyVersion leads every stored energy and demand value.
const energyVersion = 1

// Energy is one circuit's persisted energy counters (Wh, varh).
type Energy struct {
	Circuit  string
	ImportWh float64
	ExportWh float64
	VarhQ    [4]float64
}

// DemandMonth is one month's persisted maximum demand.
type DemandMonth struct {
	Month string     // "2006-01"
	MaxA  [3]float64 // per phase, A; NaN = no current on that phase
	MaxW  float64
	At    time.Time
}

// PutEnergy stores the counters of every circuit and the monthly maxima in
// one transaction. A counter never goes backwards: a stored value larger
// than the one given is kept (so a restored meter that lost its state
// cannot reset the register).
func (db *DB) PutEnergy(counters []Energy, months []DemandMonth) error {
	if err := db.beginWrite(); err != nil {
		return err
	}
	defer db.wmu.Unlock()
	err := db.bdb.Update(func(tx *bolt.Tx) error {
		eb, err := tx.CreateBucketIfNotExists(bktEnergy)
		if err != nil {
			return err
		}
		for _, e := range counters {
			if old, ok := decodeEnergy(e.Circuit, eb.Get([]byte(e.Circuit))); ok {
				e.ImportWh = math.Max(e.ImportWh, old.ImportWh)
				e.ExportWh = math.Max(e.ExportWh, old.ExportWh)
				for i := range e.VarhQ {
					e.VarhQ[i] = math.Max(e.VarhQ[i], old.VarhQ[i])
				}
			}
			if err := eb.Put([]byte(e.Circuit), encodeEnergy(e)); err != nil {
				return err
			}
		}
		mb, err := tx.CreateBucketIfNotExists(bktDemand)
		if err != nil {
			return err
		}
		for _, m := range months {
			if err := mb.Put([]byte(m.Month), encodeMonth(m)); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		return fmt.Errorf("store: energy: %w", err)
	}
	return nil
}

// Energy returns the stored counters (none before the first PutEnergy).
func (db *DB) Energy() ([]Energy, error) {
	var out []Energy
	err := db.view(func(tx *bolt.Tx) error {
		b := tx.Bucket(bktEnergy)
		if b == nil {
			return nil
		}
		return b.ForEach(func(k, v []byte) error {
			e, ok := decodeEnergy(string(k), v)
			if !ok {
				return fmt.Errorf("energy %q: %w", k, ErrCorrupt)
			}
			out = append(out, e)
			return nil
		})
	})
	if err != nil {
		return nil, fmt.Errorf("store: energy: %w", err)
	}
	return out, nil
}

// DemandMonths returns the stored monthly maxima, oldest first.
func (db *DB) DemandMonths() ([]DemandMonth, error) {
	var out []DemandMonth
	err := db.view(func(tx *bolt.Tx) error {
		b := tx.Bucket(bktDemand)
		if b == nil {
			return nil
		}
		return b.ForEach(func(k, v []byte) error {
			m, ok := decodeMonth(string(k), v)
			if !ok {
				return fmt.Errorf("demand month %q: %w", k, ErrCorrupt)
			}
			out = append(out, m)
			return nil
		})
	})
	if err != nil {
		return nil, fmt.Errorf("store: demand: %w", err)
	}
	return out, nil
}

func putF(b []byte, v float64) []byte { return binary.BigEndian.AppendUint64(b, math.Float64bits(v)) }

func getF(b []byte, i int) float64 { return math.Float64frombits(binary.BigEndian.Uint64(b[1+8*i:])) }

func encodeEnergy(e Energy) []byte {
	b := []byte{energyVersion}
	b = putF(b, e.ImportWh)
	b = putF(b, e.ExportWh)
	for _, v := range e.VarhQ {
		b = putF(b, v)
	}
	return b
}

func decodeEnergy(name string, v []byte) (Energy, bool) {
	if len(v) != 1+6*8 || v[0] != energyVersion {
		return Energy{}, false
	}
	e := Energy{Circuit: name, ImportWh: getF(v, 0), ExportWh: getF(v, 1)}
	for i := range e.VarhQ {
		e.VarhQ[i] = getF(v, 2+i)
	}
	return e, true
}

func encodeMonth(m DemandMonth) []byte {
	b := []byte{energyVersion}
	for _, a := range m.MaxA {
		b = putF(b, a)
	}
	b = putF(b, m.MaxW)
	return binary.BigEndian.AppendUint64(b, uint64(m.At.UnixNano()))
}

func decodeMonth(name string, v []byte) (DemandMonth, bool) {
	if len(v) != 1+5*8 || v[0] != energyVersion {
		return DemandMonth{}, false
	}
	m := DemandMonth{Month: name, MaxW: getF(v, 3)}
	for i := range m.MaxA {
		m.MaxA[i] = getF(v, i)
	}
	m.At = time.Unix(0, int64(binary.BigEndian.Uint64(v[1+4*8:]))).UTC()
	return m, true
}
