package ingest

import (
	"fmt"
	"strings"
	"testing"
	"unicode/utf8"
)

// TestNameStore checks that names come back as stored, whether read while more are
// being added or at the end, from the temporary file and from memory.
func TestNameStore(t *testing.T) {
	for _, onDisk := range []bool{true, false} {
		s := newNameStore()
		if onDisk {
			s.spillAt = 10 << 10 // spill after a few hundred names
		}
		var want []string
		var refs []uint64
		for i := range 5000 {
			name := fmt.Sprintf("säl-%d/%s%d.mid", i%7, strings.Repeat("x", i%50), i)
			refs = append(refs, s.add(name))
			want = append(want, name)
			if i%997 == 0 {
				if got := s.get(refs[i/2]); got != want[i/2] {
					t.Fatalf("on disk %v: name %d while adding: %q, want %q", onDisk, i/2, got, want[i/2])
				}
			}
		}
		for i, w := range want {
			if got := s.get(refs[i]); got != w {
				t.Fatalf("on disk %v: name %d: %q, want %q", onDisk, i, got, w)
			}
		}
		if onDisk && (s.f == nil || len(s.buf) > 10<<10) {
			t.Errorf("names not kept in the temporary file (file %v, %d bytes in memory)", s.f != nil, len(s.buf))
		}
		if !onDisk && s.f != nil {
			t.Errorf("a small store made a temporary file")
		}
		s.close()
	}
}

// TestNameStoreWriteError checks that a store whose file fails keeps the names
// added after the failure in memory, and never panics on a lost one.
func TestNameStoreWriteError(t *testing.T) {
	s := newNameStore()
	s.spillAt = 0
	first := s.add("d/first.mid") // spills
	if s.f == nil {
		t.Skip("no temporary file on this system")
	}
	s.f.Close() // every write from now on fails
	var refs []uint64
	var want []string
	for i := range 3000 {
		name := fmt.Sprintf("d/%040d.mid", i)
		refs = append(refs, s.add(name))
		want = append(want, name)
	}
	if s.err == nil {
		t.Fatal("no write error recorded")
	}
	kept := 0
	for i := range want {
		if refs[i]&nameInFile != 0 {
			continue // written to the buffer before the failure showed
		}
		kept++
		if got := s.get(refs[i]); got != want[i] {
			t.Fatalf("name %d after the failure: %q, want %q", i, got, want[i])
		}
	}
	if kept == 0 {
		t.Error("no name kept in memory after the failure")
	}
	if got := s.get(first); !strings.Contains(got, "name lost") {
		t.Errorf("a name lost with the file reads %q", got)
	}
}

// TestNameStoreLongName checks that a name too long for a reference is cut at a
// character boundary and marked.
func TestNameStoreLongName(t *testing.T) {
	s := newNameStore()
	long := strings.Repeat("é", maxStoredName) // two bytes each
	got := s.get(s.add(long))
	if len(got) > maxStoredName || !utf8.ValidString(got) || !strings.HasSuffix(got, "…") ||
		!strings.HasPrefix(long, strings.TrimSuffix(got, "…")) {
		t.Errorf("long name stored as %d bytes, valid %v", len(got), utf8.ValidString(got))
	}
	if got := s.get(s.add("d/after.mid")); got != "d/after.mid" {
		t.Errorf("name after a long one: %q", got)
	}
}
