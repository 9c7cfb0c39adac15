//go:build !linux

package ingest

import "fmt"

// readRegular reads the regular file at path, of at most max bytes, into the storage
// of buf when it is large enough. It checks the size before reading and never reads
// more than max+1 bytes (the file may grow while read).
func readRegular(path string, buf []byte, max int64, tooBig func() error) ([]byte, error) {
	f, size, err := openRegular(path, max)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	data, err := readCappedInto(f, buf, max, size, tooBig)
	if err != nil {
		return nil, fmt.Errorf("read: %w", err)
	}
	return data, nil
}
