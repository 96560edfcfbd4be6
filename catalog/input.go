package catalog

import (
	"bufio"
	"compress/gzip"
	"io"
	"os"
	"strings"
)

// Input is an opened catalog file: its raw bytes read and hashed on a
// goroutine of their own (HashingReader), gunzipped when the file is gzip.
// Every streaming reader opens its file through it, so Report.SHA256 is
// the same hash of the raw file bytes (the compressed bytes for gzip)
// whatever the format.
type Input struct {
	Name string
	Size int64     // bytes in the file
	Text io.Reader // the file's content, decompressed
	f    *os.File
	hr   *HashingReader
	zr   *gzip.Reader
}

// OpenInput opens name. Its content is gunzipped when the name ends in
// .gz or, with sniff, when its first bytes are the gzip magic (RFC 1952,
// section 2.3.1). Errors are *position.Error values wrapping ErrNoFile or
// ErrUnreadable.
func OpenInput(name string, sniff bool) (*Input, error) {
	f, err := os.Open(name)
	if err != nil {
		return nil, WrapFileError(name, 0, "", ErrNoFile, err)
	}
	st, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, WrapFileError(name, 0, "", ErrNoFile, err)
	}
	// A small file needs no megabyte pieces.
	piece := int(min(max(st.Size(), 4096), HashPieceBytes))
	in := &Input{Name: name, Size: st.Size(), f: f, hr: NewHashingReader(f, piece)}
	in.Text = in.hr
	gz := strings.HasSuffix(strings.ToLower(name), ".gz")
	if sniff {
		br := bufio.NewReaderSize(in.hr, 1<<16)
		magic, _ := br.Peek(2)
		gz = gz || len(magic) == 2 && magic[0] == 0x1f && magic[1] == 0x8b
		in.Text = br
	}
	if gz {
		if in.zr, err = gzip.NewReader(in.Text); err != nil {
			in.Close()
			return nil, WrapFileError(name, 0, "unreadable gzip: ", ErrUnreadable, err)
		}
		in.Text = in.zr
	}
	return in, nil
}

// Gzipped says whether the content is read through gzip; the file's size
// then says little about its rows.
func (in *Input) Gzipped() bool { return in.zr != nil }

// Finish reads whatever the format reader left (a gzip trailer, padding),
// so that the hash covers the whole file, and returns its hex SHA-256.
func (in *Input) Finish() (string, error) {
	if in.zr != nil {
		if _, err := io.Copy(io.Discard, in.zr); err != nil {
			return "", WrapFileError(in.Name, 0, "unreadable gzip: ", ErrUnreadable, err)
		}
	}
	if _, err := io.Copy(io.Discard, in.hr); err != nil {
		return "", WrapFileError(in.Name, 0, "read error: ", ErrUnreadable, err)
	}
	return in.hr.Sum(), nil
}

// Close releases the file and the hashing goroutine.
func (in *Input) Close() {
	if in.zr != nil {
		in.zr.Close()
	}
	in.hr.Close()
	in.f.Close()
}
