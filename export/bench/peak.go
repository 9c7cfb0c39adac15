package bench

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"strconv"
)

// PeakRSSEnv names the environment variable through which the memory measure asks
// a child relshard process for its own peak resident memory: when it is set, the
// process writes its peak (bytes, decimal) to the file it names before exiting.
//
// The child's rusage cannot be used: Go starts children with vfork, so the new
// process runs on the parent's memory until its exec, and Linux carries that
// memory's high-water mark into the child's ru_maxrss (measured here: /bin/true
// started from a Go program holding 200 MiB reported a ru_maxrss of 202 MiB). So a
// child reports at least its parent's peak, whatever it uses itself, and the bench
// process's own peak hid the smaller export's. /proc/self/status VmHWM belongs to
// the memory of the program after its exec.
const PeakRSSEnv = "RELSHARD_PEAK_RSS_FILE"

// WritePeakRSS writes this process's peak resident memory (bytes) to path.
func WritePeakRSS(path string) error {
	status, err := os.ReadFile("/proc/self/status")
	if err != nil {
		return fmt.Errorf("peak memory: %w", err)
	}
	n, err := vmHWM(status)
	if err != nil {
		return err
	}
	return os.WriteFile(path, []byte(strconv.FormatInt(n, 10)+"\n"), 0o644)
}

// vmHWM reads the VmHWM line ("VmHWM:    81236 kB") of a /proc/PID/status file.
func vmHWM(status []byte) (int64, error) {
	for line := range bytes.Lines(status) {
		rest, ok := bytes.CutPrefix(line, []byte("VmHWM:"))
		if !ok {
			continue
		}
		f := bytes.Fields(rest)
		if len(f) != 2 || string(f[1]) != "kB" {
			return 0, fmt.Errorf("peak memory: unexpected VmHWM line %q", bytes.TrimSpace(line))
		}
		kb, err := strconv.ParseInt(string(f[0]), 10, 64)
		if err != nil {
			return 0, fmt.Errorf("peak memory: VmHWM: %w", err)
		}
		return kb * 1024, nil
	}
	return 0, errors.New("peak memory: no VmHWM in /proc/self/status")
}

// readPeakRSS reads what WritePeakRSS wrote.
func readPeakRSS(path string) (int64, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return 0, fmt.Errorf("peak memory not reported by the child (measurable only where /proc/self/status has VmHWM, i.e. Linux): %w", err)
	}
	n, err := strconv.ParseInt(string(bytes.TrimSpace(b)), 10, 64)
	if err != nil {
		return 0, fmt.Errorf("peak memory report %s: %w", path, err)
	}
	return n, nil
}
