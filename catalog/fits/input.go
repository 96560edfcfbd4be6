package fitscat

import (
	"bufio"

	"starvet/catalog"
)

// input is an opened FITS file (catalog.Input: hashed on a goroutine of
// its own, gunzipped when the name ends in .gz or the bytes start with the
// gzip magic), buffered, with the count of FITS bytes consumed.
type input struct {
	*catalog.Input
	r   *bufio.Reader // the FITS bytes
	pos int64         // FITS bytes consumed (uncompressed offset)
}

const bufBytes = 1 << 16

func open(name string) (*input, error) {
	ci, err := catalog.OpenInput(name, true)
	if err != nil {
		return nil, err
	}
	return &input{Input: ci, r: bufio.NewReaderSize(ci.Text, bufBytes)}, nil
}
