package bench

import (
	"os"
	"path/filepath"
	"testing"
)

func TestVMHWM(t *testing.T) {
	tests := []struct {
		status string
		want   int64
		ok     bool
	}{
		{"Name:\trelshard\nVmPeak:\t  123456 kB\nVmHWM:\t   81236 kB\nVmRSS:\t 70000 kB\n", 81236 << 10, true},
		{"VmHWM: 1 kB\n", 1024, true},
		{"VmHWM:\t81236 MB\n", 0, false},
		{"VmRSS:\t70000 kB\n", 0, false},
		{"VmHWM:\tlots kB\n", 0, false},
	}
	for _, tt := range tests {
		got, err := vmHWM([]byte(tt.status))
		if (err == nil) != tt.ok || got != tt.want {
			t.Errorf("vmHWM(%q) = %d, %v; want %d, ok %v", tt.status, got, err, tt.want, tt.ok)
		}
	}
}

// TestWritePeakRSS checks that the reported peak covers memory this process touched.
func TestWritePeakRSS(t *testing.T) {
	if _, err := os.Stat("/proc/self/status"); err != nil {
		t.Skip("no /proc here")
	}
	if testing.Short() {
		t.Skip("allocates 160 MiB")
	}
	hold := make([]byte, 160<<20)
	for i := range hold {
		hold[i] = 1
	}
	path := filepath.Join(t.TempDir(), "peak.txt")
	if err := WritePeakRSS(path); err != nil {
		t.Fatal(err)
	}
	n, err := readPeakRSS(path)
	if err != nil || n < 150<<20 {
		t.Fatalf("this process's peak read as %d bytes (%v), want at least 150 MiB", n, err)
	}
	hold[len(hold)-1] = 0
}
