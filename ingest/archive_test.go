package ingest

import (
	"archive/tar"
	"archive/zip"
	"bytes"
	"encoding/binary"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"sync/atomic"
	"testing"
)

// fxZipLying writes a zip whose one stored entry claims a smaller uncompressed size than
// it has (a classic zip bomb trick): CreateRaw takes the sizes as given.
func fxZipLying(t testing.TB, name string, data []byte, claimed uint64) []byte {
	t.Helper()
	var buf bytes.Buffer
	zw := zip.NewWriter(&buf)
	w, err := zw.CreateRaw(&zip.FileHeader{Name: name, Method: zip.Store, CompressedSize64: uint64(len(data)), UncompressedSize64: claimed})
	if err != nil {
		t.Fatal(err)
	}
	w.Write(data)
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// TestHostileArchives: every hostile entry is skipped with its reason, and archives over
// the caps are refused as one record; nothing is written anywhere.
func TestHostileArchives(t *testing.T) {
	tune := fxSMF(t, 96, false, fxTune(96, 0))
	lim := Limits{MaxEntries: 4, MaxEntrySize: 64 << 10, MaxTotalSize: 256 << 10, MaxBuffered: 1 << 10}
	big := make([]byte, 100<<10)
	many := []fxTarEntry{{Name: "1.mid", Data: tune}, {Name: "2.mid", Data: tune}, {Name: "3.mid", Data: tune}, {Name: "4.mid", Data: tune}, {Name: "5.mid", Data: tune}}
	var manyZip []fxZipEntry
	for _, e := range many {
		manyZip = append(manyZip, fxZipEntry{Name: e.Name, Data: e.Data})
	}
	tests := []struct {
		name string // archive file name
		data []byte
		want []outcome
	}{
		{"names.zip", fxZip(t,
			fxZipEntry{Name: "../up.mid", Data: tune},
			fxZipEntry{Name: "/abs.mid", Data: tune},
			fxZipEntry{Name: `a\..\..\win.mid`, Data: tune},
			fxZipEntry{Name: "C:/drive.mid", Data: tune},
		), []outcome{
			{"../up.mid", StatusSkipped, ErrUnsafePath.Error(), "", ""},
			{"/abs.mid", StatusSkipped, ErrUnsafePath.Error(), "", ""},
			{"C:/drive.mid", StatusSkipped, ErrUnsafePath.Error(), "", ""},
			{`a\..\..\win.mid`, StatusSkipped, ErrUnsafePath.Error(), "", ""},
		}},
		{"links.zip", fxZip(t,
			fxZipEntry{Name: "link.mid", Data: []byte("/etc/passwd"), Mode: os.ModeSymlink | 0o777},
			fxZipEntry{Name: "ok.mid", Data: tune},
		), []outcome{
			{"link.mid", StatusSkipped, ErrLinkEntry.Error(), "", ""},
			{"ok.mid", StatusOK, "", "", ""},
		}},
		{"bomb.zip", fxZip(t,
			fxZipEntry{Name: "big.mid", Data: big},
			fxZipEntry{Name: "big.mid.gz", Data: fxGzip(t, make([]byte, 2<<20))},
		), []outcome{
			{"big.mid", StatusSkipped, ErrEntryTooLarge.Error(), "", ""},
			{"big.mid.gz", StatusSkipped, ErrTooLarge.Error(), "", ""}, // over MaxFileSize once gunzipped
		}},
		{"lying.zip", fxZipLying(t, "liar.mid", big, 100), []outcome{
			{"liar.mid", StatusSkipped, ErrBadArchive.Error(), "", ""}, // archive/zip checks the size it inflates
		}},
		{"many.zip", fxZip(t, manyZip...), []outcome{{"", StatusSkipped, ErrTooManyEntries.Error(), "", ""}}},
		{"total.zip", fxZip(t,
			fxZipEntry{Name: "a.bin", Data: big}, fxZipEntry{Name: "b.bin", Data: big}, fxZipEntry{Name: "c.bin", Data: big},
		), []outcome{{"", StatusSkipped, ErrArchiveTooLarge.Error(), "", ""}}},
		{"garbage.zip", []byte("PK\x03\x04 this is not a zip"), []outcome{{"", StatusSkipped, ErrBadArchive.Error(), "", ""}}},
		{"entries.tar", fxTar(t, false,
			fxTarEntry{Name: "../../up.mid", Data: tune},
			fxTarEntry{Name: "/abs.mid", Data: tune},
			fxTarEntry{Name: "sym.mid", Type: tar.TypeSymlink, Link: "../../etc/passwd"},
			fxTarEntry{Name: "hard.mid", Type: tar.TypeLink, Link: "ok.mid"},
			fxTarEntry{Name: "dev.mid", Type: tar.TypeChar},
			fxTarEntry{Name: "fifo.mid", Type: tar.TypeFifo},
			fxTarEntry{Name: "big.mid", Data: big},
			fxTarEntry{Name: "bomb.mid.gz", Data: fxGzip(t, make([]byte, 3<<20))},
			fxTarEntry{Name: "notgz.mid.gz", Data: tune},
			fxTarEntry{Name: "ok.mid", Data: tune},
			fxTarEntry{Name: "sub/", Type: tar.TypeDir},
		), []outcome{
			{"../../up.mid", StatusSkipped, ErrUnsafePath.Error(), "", ""},
			{"/abs.mid", StatusSkipped, ErrUnsafePath.Error(), "", ""},
			{"big.mid", StatusSkipped, ErrEntryTooLarge.Error(), "", ""},
			{"bomb.mid.gz", StatusSkipped, ErrTooLarge.Error(), "", ""},
			{"dev.mid", StatusSkipped, ErrSpecialEntry.Error(), "", ""},
			{"fifo.mid", StatusSkipped, ErrSpecialEntry.Error(), "", ""},
			{"hard.mid", StatusSkipped, ErrLinkEntry.Error(), "", ""},
			{"notgz.mid.gz", StatusSkipped, ErrNotGzip.Error(), "", ""},
			{"ok.mid", StatusOK, "", "", ""},
			{"sym.mid", StatusSkipped, ErrLinkEntry.Error(), "", ""},
		}},
		{"many.tgz", fxTar(t, true, many...), []outcome{{"", StatusSkipped, ErrTooManyEntries.Error(), "", ""}}},
		{"total.tar.gz", fxTar(t, true, fxTarEntry{Name: "a", Data: big}, fxTarEntry{Name: "b", Data: big}, fxTarEntry{Name: "c", Data: big}),
			[]outcome{{"", StatusSkipped, ErrArchiveTooLarge.Error(), "", ""}}},
		{"cut.tar", fxTar(t, false, fxTarEntry{Name: "a.mid", Data: tune}, fxTarEntry{Name: "b.mid", Data: big[:5000]})[:2000],
			[]outcome{
				{"a.mid", StatusOK, "", "", ""},
				{"b.mid", StatusSkipped, ErrBadArchive.Error(), "", ""}, // its header is there, its bytes are not
				{"", StatusSkipped, ErrBadArchive.Error(), "", ""},      // the damage, after what could be read
			}},
		{"cut.tgz", fxTar(t, true, fxTarEntry{Name: "a.mid", Data: tune})[:30], []outcome{{"", StatusSkipped, ErrBadArchive.Error(), "", ""}}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			dir := t.TempDir()
			p := filepath.Join(dir, tt.name)
			if err := os.WriteFile(p, tt.data, 0o644); err != nil {
				t.Fatal(err)
			}
			opts := DefaultOptions()
			opts.MaxFileSize = 1 << 20
			opts.Limits = lim
			if tt.name == "entries.tar" {
				opts.Limits.MaxEntries = 20
			}
			got := scanAll(t, []Source{{Path: p}}, opts)
			if g := outcomes(got); !reflect.DeepEqual(g, tt.want) {
				t.Errorf("got %s\nwant %s", fmtOutcomes(g), fmtOutcomes(tt.want))
			}
			for _, r := range got {
				if r.Record.Status == StatusSkipped && r.Record.Reason == "" {
					t.Errorf("%q: skipped without a reason", r.Record.Path)
				}
			}
			// Nothing was extracted: the folder still holds only the archive.
			if ents, _ := os.ReadDir(dir); len(ents) != 1 {
				t.Errorf("folder holds %d files after the scan", len(ents))
			}
		})
	}
}

// TestTarSortedMultiPass reads tars with a buffer cap smaller than the entries, so
// that several windows are needed: the entries still come out sorted, each read once.
// A stream in name order is read once after the listing, the pass going on from
// window to window; one in reverse order is read again from the start per window.
func TestTarSortedMultiPass(t *testing.T) {
	entry := func(i int) fxTarEntry {
		return fxTarEntry{Name: string(rune('a'+i)) + ".mid", Data: fxSMF(t, 96, false, []fxNote{{Start: 0, Dur: 96, Key: uint8(40 + 3*i), Vel: 64}, {Start: 96, Dur: 96 * uint32(i+1), Key: 50, Vel: 64}})}
	}
	var want []outcome
	for i := 0; i <= 9; i++ {
		want = append(want, outcome{string(rune('a'+i)) + ".mid", StatusOK, "", "", ""})
	}
	var opens atomic.Int64
	hook := func() { opens.Add(1) }
	tarOpenHook.Store(&hook)
	defer tarOpenHook.Store(nil)
	for _, tc := range []struct {
		name  string
		order []int
		opens int64 // listing plus reading passes
	}{
		{"in order", []int{0, 1, 2, 3, 4, 5, 6, 7, 8, 9}, 2},
		{"reversed", []int{9, 8, 7, 6, 5, 4, 3, 2, 1, 0}, 5},         // a pass per window
		{"in order but one", []int{0, 1, 2, 3, 9, 4, 5, 6, 7, 8}, 3}, // "j" is behind the pass
	} {
		var entries []fxTarEntry
		for _, i := range tc.order {
			entries = append(entries, entry(i))
		}
		for _, gz := range []bool{false, true} {
			dir := t.TempDir()
			p := filepath.Join(dir, "a.tar")
			if gz {
				p += ".gz"
			}
			if err := os.WriteFile(p, fxTar(t, gz, entries...), 0o644); err != nil {
				t.Fatal(err)
			}
			opts := DefaultOptions()
			opts.Limits.MaxBuffered = 150 // three 43-byte entries per window: four windows
			opens.Store(0)
			got := scanAll(t, []Source{{Path: p}}, opts)
			if g := outcomes(got); !reflect.DeepEqual(g, want) {
				t.Errorf("%s, gzip %v: got %s\nwant %s", tc.name, gz, fmtOutcomes(g), fmtOutcomes(want))
			}
			if n := opens.Load(); n != tc.opens {
				t.Errorf("%s, gzip %v: the stream was opened %d times, want %d", tc.name, gz, n, tc.opens)
			}
		}
	}
}

func TestSafeEntryName(t *testing.T) {
	tests := []struct {
		name string
		want bool
	}{
		{"a.mid", true},
		{"dir/a.mid", true},
		{"./a.mid", true},
		{"a..b.mid", true},
		{"", false},
		{"/a.mid", false},
		{`\a.mid`, false},
		{"../a.mid", false},
		{"dir/../../a.mid", false},
		{`dir\..\a.mid`, false},
		{"c:a.mid", false},
		{"a\x00.mid", false},
	}
	for _, tt := range tests {
		if got := safeEntryName(tt.name); got != tt.want {
			t.Errorf("safeEntryName(%q) = %v, want %v", tt.name, got, tt.want)
		}
	}
}

// TestZipEntryCountBeforeAlloc: a zip end record claiming 65,535 entries in a tiny file
// is refused by archive/zip before anything is allocated for them.
func TestZipEntryCountBeforeAlloc(t *testing.T) {
	// End of central directory record (PKWARE APPNOTE.TXT, section 4.3.16).
	eocd := make([]byte, 22)
	binary.LittleEndian.PutUint32(eocd, 0x06054b50)
	binary.LittleEndian.PutUint16(eocd[8:], 0xFFFF)
	binary.LittleEndian.PutUint16(eocd[10:], 0xFFFF)
	binary.LittleEndian.PutUint32(eocd[12:], 0xFFFFFF)
	dir := t.TempDir()
	p := filepath.Join(dir, "claims.zip")
	os.WriteFile(p, eocd, 0o644)
	got := scanAll(t, []Source{{Path: p}}, DefaultOptions())
	if len(got) != 1 || got[0].Record.Path != "" || got[0].Record.Status != StatusSkipped || !strings.Contains(got[0].Record.Reason, "zip") {
		t.Errorf("got %+v", outcomes(got))
	}
}
