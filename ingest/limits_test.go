package ingest

import (
	"bytes"
	"compress/gzip"
	"errors"
	"io"
	"testing"
)

// countingReader serves endless zero bytes and counts how many were read.
type countingReader struct{ n int64 }

func (c *countingReader) Read(p []byte) (int, error) {
	clear(p)
	c.n += int64(len(p))
	return len(p), nil
}

// TestReadCappedReadsAtMostOneMore: a stream over the cap is refused after reading at
// most cap+1 bytes.
func TestReadCappedReadsAtMostOneMore(t *testing.T) {
	tooBig := errors.New("too big")
	for _, max := range []int64{0, 1, 511, 4096, 100_000} {
		r := &countingReader{}
		_, err := readCapped(r, max, 0, tooBig)
		if !errors.Is(err, tooBig) || r.n > max+1 {
			t.Errorf("cap %d: err %v after %d bytes", max, err, r.n)
		}
	}
	// Within the cap: all bytes, whatever the size hint says.
	for _, hint := range []int64{0, 3, 10} {
		got, err := readCapped(bytes.NewReader([]byte("abcdef")), 6, hint, tooBig)
		if hint > 6 {
			if !errors.Is(err, tooBig) {
				t.Errorf("hint %d over the cap: err %v", hint, err)
			}
			continue
		}
		if err != nil || string(got) != "abcdef" {
			t.Errorf("hint %d: %q, %v", hint, got, err)
		}
	}
}

func TestGunzipCapped(t *testing.T) {
	tune := fxSMF(t, 96, false, fxTune(96, 0))
	members := append(fxGzip(t, tune[:10]), fxGzip(t, tune[10:])...)
	gz := fxGzip(t, tune)
	corrupt := append([]byte(nil), gz...)
	corrupt[len(corrupt)-5] ^= 0xFF // the CRC-32 of the trailer (RFC 1952, section 2.3.1)
	tests := []struct {
		name    string
		in      []byte
		max     int64
		want    []byte
		wantErr error
	}{
		{"one member", gz, 1 << 20, tune, nil},
		{"two members (RFC 1952 allows several)", members, 1 << 20, tune, nil},
		{"exactly at the cap", gz, int64(len(tune)), tune, nil},
		{"one byte over the cap", gz, int64(len(tune)) - 1, nil, ErrTooLarge},
		{"bomb", fxGzip(t, make([]byte, 1<<20)), 64 << 10, nil, ErrTooLarge},
		{"not gzip", tune, 1 << 20, nil, ErrNotGzip},
		{"empty", nil, 1 << 20, nil, ErrNotGzip},
		{"cut short", gz[:len(gz)/2], 1 << 20, nil, io.ErrUnexpectedEOF},
		{"bad checksum", corrupt, 1 << 20, nil, gzip.ErrChecksum},
	}
	for _, tt := range tests {
		got, err := gunzipCapped(tt.in, tt.max)
		switch {
		case tt.wantErr == nil && err != nil, tt.wantErr != nil && err == nil:
			t.Errorf("%s: err %v, want %v", tt.name, err, tt.wantErr)
		case tt.wantErr != nil && !errors.Is(err, tt.wantErr):
			t.Errorf("%s: err %v, want %v", tt.name, err, tt.wantErr)
		case !bytes.Equal(got, tt.want):
			t.Errorf("%s: %d bytes, want %d", tt.name, len(got), len(tt.want))
		}
	}
}

func TestLimitsDefaults(t *testing.T) {
	if got, want := (Limits{MaxEntries: 7}).withDefaults(), (Limits{MaxEntries: 7, MaxEntrySize: 64 << 20, MaxTotalSize: 4 << 30, MaxBuffered: 128 << 20}); got != want {
		t.Errorf("withDefaults = %+v, want %+v", got, want)
	}
	if got := sizeString(64 << 20); got != "64 MiB" {
		t.Errorf("sizeString = %q", got)
	}
}
