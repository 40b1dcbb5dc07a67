package store

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"os"
)

// bbolt's on-disk page format (bbolt v1.5, internal/common/page.go), in the
// native byte order, which is little-endian on every platform built here
// (amd64, arm64, armv7).
const (
	fsPageHeader  = 16 // id uint64, flags uint16, count uint16, overflow uint32
	fsElemSize    = 16 // branch: pos, ksize uint32, pgid uint64; leaf: flags, pos, ksize, vsize uint32
	fsBucketHdr   = 16 // a bucket value: root pgid uint64, sequence uint64; an inline page follows when root is 0
	fsBranch      = 0x01
	fsLeaf        = 0x02
	fsBucketEntry = 0x01
)

var le = binary.LittleEndian

// fsck checks the pages of a bbolt file by reading them with ReadAt, not
// through a memory map, so no damage can fault. It enforces everything
// bbolt's own free-page scan asserts or reports (that scan runs on a
// goroutine of its own at every writable open of a NoFreelistSync file, and
// there any problem ends the process): each page reachable from root once,
// below the high-water mark hwm, a branch or a leaf, with its header naming
// its own id; elements inside the page; keys in order within each page and
// within the range its parent gives; bucket values well formed. It also
// rejects a file shorter than hwm pages.
func fsck(f io.ReaderAt, size int64, pageSize int, hwm, root uint64) error {
	if hwm < 2 || hwm > uint64(size)/uint64(pageSize) {
		return fmt.Errorf("file is %d bytes but its pages reach %d (truncated?)", size, hwm*uint64(pageSize))
	}
	c := &checker{f: f, ps: pageSize, hwm: hwm, seen: make([]bool, hwm)}
	_, err := c.tree(root, nil, nil, 0)
	return err
}

type checker struct {
	f    io.ReaderAt
	ps   int
	hwm  uint64
	seen []bool
}

// maxDepth bounds the tree depth (a cycle is caught by seen; this only
// keeps a hostile but acyclic file from recursing deeply).
const maxDepth = 64

// tree checks the subtree at id whose keys must lie in [lo, hi) (nil = open)
// and returns its largest key.
func (c *checker) tree(id uint64, lo, hi []byte, depth int) ([]byte, error) {
	if depth > maxDepth {
		return nil, fmt.Errorf("page %d: tree deeper than %d", id, maxDepth)
	}
	p, err := c.page(id)
	if err != nil {
		return nil, err
	}
	flags, count := le.Uint16(p[8:]), int(le.Uint16(p[10:]))
	if fsPageHeader+count*fsElemSize > len(p) {
		return nil, fmt.Errorf("page %d: %d elements do not fit", id, count)
	}
	switch flags {
	case fsBranch:
		return c.branch(id, p, count, lo, hi, depth)
	case fsLeaf:
		return c.leaf(id, p, count, lo, hi, depth, false)
	}
	return nil, fmt.Errorf("page %d: type flags %#x, want a branch or a leaf", id, flags)
}

// page reads page id and its overflow pages, marking them reachable.
func (c *checker) page(id uint64) ([]byte, error) {
	if id < 2 || id >= c.hwm {
		return nil, fmt.Errorf("page %d: outside 2..%d", id, c.hwm-1)
	}
	hdr := make([]byte, fsPageHeader)
	if _, err := c.f.ReadAt(hdr, int64(id)*int64(c.ps)); err != nil {
		return nil, fmt.Errorf("page %d: %w", id, err)
	}
	if got := le.Uint64(hdr); got != id {
		return nil, fmt.Errorf("page %d: header says page %d", id, got)
	}
	over := uint64(le.Uint32(hdr[12:]))
	if over >= c.hwm-id {
		return nil, fmt.Errorf("page %d: %d overflow pages run past the high-water mark", id, over)
	}
	for i := id; i <= id+over; i++ {
		if c.seen[i] {
			return nil, fmt.Errorf("page %d: referenced more than once", i)
		}
		c.seen[i] = true
	}
	p := make([]byte, int(over+1)*c.ps)
	if _, err := c.f.ReadAt(p, int64(id)*int64(c.ps)); err != nil {
		return nil, fmt.Errorf("page %d: %w", id, err)
	}
	return p, nil
}

// span returns p[off+pos : off+pos+n] or an error when it leaves p.
func span(p []byte, off int, pos, n uint32) ([]byte, error) {
	a := uint64(off) + uint64(pos)
	b := a + uint64(n)
	if b > uint64(len(p)) {
		return nil, errors.New("element data outside its page")
	}
	return p[a:b], nil
}

func (c *checker) branch(id uint64, p []byte, count int, lo, hi []byte, depth int) ([]byte, error) {
	if count == 0 {
		return nil, fmt.Errorf("branch page %d is empty", id)
	}
	keys := make([][]byte, count)
	kids := make([]uint64, count)
	for i := range count {
		off := fsPageHeader + i*fsElemSize
		k, err := span(p, off, le.Uint32(p[off:]), le.Uint32(p[off+4:]))
		if err != nil {
			return nil, fmt.Errorf("branch page %d element %d: %w", id, i, err)
		}
		keys[i], kids[i] = k, le.Uint64(p[off+8:])
	}
	run := lo
	var last []byte
	for i := range count {
		if err := keyOrder(id, i, keys[i], run, hi); err != nil {
			return nil, err
		}
		next := hi
		if i+1 < count {
			next = keys[i+1]
		}
		m, err := c.tree(kids[i], keys[i], next, depth+1)
		if err != nil {
			return nil, err
		}
		run, last = m, m
	}
	return last, nil
}

func (c *checker) leaf(id uint64, p []byte, count int, lo, hi []byte, depth int, inline bool) ([]byte, error) {
	run := lo
	for i := range count {
		off := fsPageHeader + i*fsElemSize
		fl, pos, ks, vs := le.Uint32(p[off:]), le.Uint32(p[off+4:]), le.Uint32(p[off+8:]), le.Uint32(p[off+12:])
		k, err := span(p, off, pos, ks)
		if err != nil {
			return nil, fmt.Errorf("leaf page %d element %d: %w", id, i, err)
		}
		v, err := span(p, off, pos+ks, vs)
		if err != nil || pos+ks < pos {
			return nil, fmt.Errorf("leaf page %d element %d: value outside its page", id, i)
		}
		if err := keyOrder(id, i, k, run, hi); err != nil {
			return nil, err
		}
		run = k
		if fl&fsBucketEntry == 0 {
			continue
		}
		if inline {
			return nil, fmt.Errorf("inline bucket in page %d holds a bucket", id)
		}
		if err := c.bucket(id, v, depth); err != nil {
			return nil, fmt.Errorf("bucket %q: %w", k, err)
		}
	}
	if count > 0 {
		return run, nil
	}
	return nil, nil
}

// bucket checks a bucket value: a root page, or an inline leaf page.
func (c *checker) bucket(id uint64, v []byte, depth int) error {
	if len(v) < fsBucketHdr {
		return fmt.Errorf("page %d: bucket value of %d bytes", id, len(v))
	}
	if r := le.Uint64(v); r != 0 {
		_, err := c.tree(r, nil, nil, depth+1)
		return err
	}
	in := v[fsBucketHdr:]
	if len(in) < fsPageHeader {
		return fmt.Errorf("page %d: inline bucket of %d bytes", id, len(in))
	}
	count := int(le.Uint16(in[10:]))
	if le.Uint16(in[8:]) != fsLeaf || fsPageHeader+count*fsElemSize > len(in) {
		return fmt.Errorf("page %d: malformed inline bucket", id)
	}
	_, err := c.leaf(id, in, count, nil, nil, depth+1, true)
	return err
}

// keyOrder applies bbolt's rules: the first key not below lo, each later
// one above the one before, every key below hi.
func keyOrder(id uint64, i int, k, prev, hi []byte) error {
	if prev != nil {
		if cmp := bytes.Compare(prev, k); cmp > 0 || (i > 0 && cmp == 0) {
			return fmt.Errorf("page %d: key %d (%x) out of order", id, i, k)
		}
	}
	if hi != nil && bytes.Compare(k, hi) >= 0 {
		return fmt.Errorf("page %d: key %d (%x) not below its parent's next key", id, i, k)
	}
	return nil
}

// fsckFile runs fsck on path with the meta values bbolt chose.
func fsckFile(path string, pageSize int, hwm, root uint64) error {
	f, err := os.Open(path)
	if err != nil {
		return err
	}
	defer f.Close()
	fi, err := f.Stat()
	if err != nil {
		return err
	}
	return fsck(f, fi.Size(), pageSize, hwm, root)
}
