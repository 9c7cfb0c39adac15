package ingest

import (
	"fmt"
	"strings"
	"testing"
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
		for i := range 5000 {
			name := fmt.Sprintf("säl-%d/%s%d.mid", i%7, strings.Repeat("x", i%50), i)
			if got := s.add(name); got != int32(i) {
				t.Fatalf("add %d gave index %d", i, got)
			}
			want = append(want, name)
			if i%997 == 0 {
				if got := s.get(int32(i / 2)); got != want[i/2] {
					t.Fatalf("on disk %v: name %d while adding: %q, want %q", onDisk, i/2, got, want[i/2])
				}
			}
		}
		for i, w := range want {
			if got := s.get(int32(i)); got != w {
				t.Fatalf("on disk %v: name %d: %q, want %q", onDisk, i, got, w)
			}
		}
		if onDisk && (s.f == nil || len(s.mem) != 0 || s.buf != nil) {
			t.Errorf("names not kept in the temporary file (file %v, %d in memory)", s.f != nil, len(s.mem))
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
	s.add("d/first.mid") // spills
	if s.f == nil {
		t.Skip("no temporary file on this system")
	}
	s.f.Close() // every write from now on fails
	want := []string{"d/first.mid"}
	for i := range 3000 {
		name := fmt.Sprintf("d/%040d.mid", i)
		s.add(name)
		want = append(want, name)
	}
	if s.err == nil {
		t.Fatal("no write error recorded")
	}
	for i := len(s.ends); i < len(want); i++ {
		if got := s.get(int32(i)); got != want[i] {
			t.Fatalf("name %d after the failure: %q, want %q", i, got, want[i])
		}
	}
	if len(s.ends) > 0 {
		if got := s.get(0); !strings.Contains(got, "name lost") {
			t.Errorf("a name lost with the file reads %q", got)
		}
	}
}
