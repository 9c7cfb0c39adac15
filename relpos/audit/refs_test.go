package audit

import (
	"os"
	"os/exec"
	"path/filepath"
	"testing"
)

// Debian package paths of the outside references (installed by .ci/run).
const (
	midicsvPath  = "/usr/bin/midicsv"
	openmsxGlob  = "/usr/share/games/openttd/baseset/openmsx/*.mid"
	chromiumPath = "/usr/bin/chromium"
)

// needRef skips the test when an outside reference is missing, or fails it when
// RELSHARD_REQUIRE_REFS=1.
func needRef(t testing.TB, what string, ok bool) {
	t.Helper()
	if ok {
		return
	}
	if os.Getenv("RELSHARD_REQUIRE_REFS") == "1" {
		t.Fatalf("%s is required (RELSHARD_REQUIRE_REFS=1) but missing", what)
	}
	t.Skipf("%s missing; install it (see .ci/run) to run this check", what)
}

func haveFile(p string) bool {
	_, err := os.Stat(p)
	return err == nil
}

func openmsxFiles(t testing.TB) []string {
	t.Helper()
	files, _ := filepath.Glob(openmsxGlob)
	needRef(t, "Debian package openttd-openmsx ("+openmsxGlob+")", len(files) > 0)
	return files
}

func needMidicsv(t testing.TB) {
	t.Helper()
	_, err := exec.LookPath(midicsvPath)
	needRef(t, "Debian package midicsv ("+midicsvPath+")", err == nil)
}
