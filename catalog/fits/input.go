package fitscat

import (
	"bufio"
	"compress/gzip"
	"io"
	"os"
	"strings"

	"starvet/catalog"
)

// input is an opened FITS file: the raw bytes read and hashed on a
// goroutine of their own, gunzipped when the name ends in .gz or the bytes
// start with the gzip magic (RFC 1952), buffered.
type input struct {
	f    *os.File
	raw  *catalog.HashingReader
	zr   *gzip.Reader
	r    *bufio.Reader // the FITS bytes
	size int64         // bytes in the file
	pos  int64         // FITS bytes consumed (uncompressed offset)
	name string
}

const bufBytes = 1 << 16

func open(name string) (*input, error) {
	f, err := os.Open(name)
	if err != nil {
		return nil, catalog.WrapFileError(name, 0, "", catalog.ErrNoFile, err)
	}
	st, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, catalog.WrapFileError(name, 0, "", catalog.ErrNoFile, err)
	}
	in := &input{f: f, raw: catalog.NewHashingReader(f, int(min(max(st.Size(), 4096), catalog.HashPieceBytes))), size: st.Size(), name: name}
	br := bufio.NewReaderSize(in.raw, bufBytes)
	magic, _ := br.Peek(2)
	if strings.HasSuffix(strings.ToLower(name), ".gz") || len(magic) == 2 && magic[0] == 0x1f && magic[1] == 0x8b {
		if in.zr, err = gzip.NewReader(br); err != nil {
			in.close()
			return nil, catalog.WrapFileError(name, 0, "unreadable gzip: ", catalog.ErrUnreadable, err)
		}
		br = bufio.NewReaderSize(in.zr, bufBytes)
	}
	in.r = br
	return in, nil
}

func (in *input) gzipped() bool { return in.zr != nil }

// finish reads what the table reader left, so that the hash covers the
// whole file, and returns the hex SHA-256 of the raw file bytes.
func (in *input) finish() (string, error) {
	if _, err := io.Copy(io.Discard, in.raw); err != nil {
		return "", catalog.WrapFileError(in.name, 0, "", catalog.ErrUnreadable, err)
	}
	return in.raw.Sum(), nil
}

func (in *input) close() {
	if in.zr != nil {
		in.zr.Close()
	}
	in.raw.Close()
	in.f.Close()
}
