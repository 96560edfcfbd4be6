package shard

import (
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"io"
	"math"
	"os"
	"path/filepath"

	"starvet/catalog"
)

// Version is the format version this build writes and the newest it reads.
const Version = 1

const (
	magic      = "SVSHARD\x1a"
	headerSize = len(magic) + 4 + 4 + 8
	chunkBytes = 1 << 16
)

var castagnoli = crc32.MakeTable(crc32.Castagnoli)

// WriteAll writes every row of t to path as a shard.
func WriteAll(path string, t *catalog.Table) error {
	if t.Len() > math.MaxInt32 {
		return fmt.Errorf("%s: %d rows do not fit a shard (at most %d)", path, t.Len(), math.MaxInt32)
	}
	rows := make([]int32, t.Len())
	for i := range rows {
		rows[i] = int32(i)
	}
	return Write(path, t, rows)
}

// Write writes the given rows of t (0-based, in the order given) to path
// as a shard. It writes a temporary file in path's directory, syncs it and
// renames it to path, so path never holds a partly written shard.
func Write(path string, t *catalog.Table, rows []int32) (err error) {
	if err := check(t, rows); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, "."+base+".*.tmp")
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(f.Name())
			err = fmt.Errorf("%s: %w", path, err)
		}
	}()
	if err := encode(f, t, rows); err != nil {
		return err
	}
	if err := f.Chmod(0o644); err != nil {
		return err
	}
	if err := f.Sync(); err != nil {
		return err
	}
	if err := f.Close(); err != nil {
		return err
	}
	if err := os.Rename(f.Name(), path); err != nil {
		return err
	}
	// The rename survives a crash only once the directory is synced; some
	// file systems cannot sync a directory, and the shard is whole anyway.
	if d, err := os.Open(dir); err == nil {
		d.Sync()
		d.Close()
	}
	return nil
}

func check(t *catalog.Table, rows []int32) error {
	n := t.Len()
	if len(t.Lines) != n {
		return fmt.Errorf("table %q has %d ids but %d lines", t.Name, n, len(t.Lines))
	}
	for f := catalog.Field(1); f < catalog.NumFields; f++ {
		if c := t.Cols[f]; c != nil && len(c) != n {
			return fmt.Errorf("table %q: column %s has %d values for %d ids", t.Name, catalog.Fields[f].Name, len(c), n)
		}
	}
	for i, r := range rows {
		if r < 0 || int(r) >= n {
			return fmt.Errorf("row %d (entry %d of rows) is outside table %q of %d rows", r, i, t.Name, n)
		}
		if t.Lines[r] < 0 {
			return fmt.Errorf("table %q: row %d has negative line %d", t.Name, r, t.Lines[r])
		}
	}
	return nil
}

// sink buffers the payload, feeds it to the checksum and counts it.
type sink struct {
	w   io.Writer
	buf []byte
	crc uint32
	n   uint64
	err error
}

func (s *sink) flush() {
	if s.err != nil || len(s.buf) == 0 {
		s.buf = s.buf[:0]
		return
	}
	s.crc = crc32.Update(s.crc, castagnoli, s.buf)
	s.n += uint64(len(s.buf))
	_, s.err = s.w.Write(s.buf)
	s.buf = s.buf[:0]
}

func (s *sink) maybeFlush() {
	if len(s.buf) >= chunkBytes {
		s.flush()
	}
}

func (s *sink) uvarint(x uint64) { s.buf = binary.AppendUvarint(s.buf, x); s.maybeFlush() }

func (s *sink) str(x string) {
	s.buf = binary.AppendUvarint(s.buf, uint64(len(x)))
	s.buf = append(s.buf, x...)
	s.maybeFlush()
}

func (s *sink) float(x float64) {
	s.buf = binary.LittleEndian.AppendUint64(s.buf, math.Float64bits(x))
}

// encode writes the header with a zero checksum and length, the payload,
// then the checksum and length in place.
func encode(f *os.File, t *catalog.Table, rows []int32) error {
	var fields []catalog.Field
	for c := catalog.Field(1); c < catalog.NumFields; c++ {
		if t.Cols[c] != nil {
			fields = append(fields, c)
		}
	}
	head := make([]byte, headerSize)
	copy(head, magic)
	binary.LittleEndian.PutUint32(head[len(magic):], Version)
	if _, err := f.Write(head); err != nil {
		return err
	}
	s := &sink{w: f, buf: make([]byte, 0, chunkBytes+8*1024)}
	s.uvarint(uint64(len(rows)))
	s.uvarint(uint64(len(fields)))
	s.str(t.Name)
	s.str(t.Release)
	s.str(string(t.Role))
	s.float(t.EpochJyr)
	for _, c := range fields {
		s.str(catalog.Fields[c].Name)
	}
	for _, r := range rows {
		s.str(t.IDs[r])
	}
	for _, r := range rows {
		s.uvarint(uint64(t.Lines[r]))
	}
	for _, c := range fields {
		col := t.Cols[c]
		for i, r := range rows {
			s.float(col[r])
			if i&1023 == 1023 {
				s.maybeFlush()
			}
		}
		s.maybeFlush()
	}
	s.flush()
	if s.err != nil {
		return s.err
	}
	binary.LittleEndian.PutUint32(head[len(magic)+4:], s.crc)
	binary.LittleEndian.PutUint64(head[len(magic)+8:], s.n)
	if _, err := f.WriteAt(head, 0); err != nil {
		return err
	}
	return nil
}
