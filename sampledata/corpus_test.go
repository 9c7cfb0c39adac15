package sampledata_test

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/relshard/relshard/sampledata"
)

func TestGenerateDeterministic(t *testing.T) {
	cfg := sampledata.Config{Files: 60, Damaged: 15, Seed: 42, Workers: 1}
	want := mustCollect(t, cfg)
	if len(want) != 75 {
		t.Fatalf("got %d files, want 75", len(want))
	}
	for _, w := range []int{1, 2, 3, 8} {
		cfg.Workers = w
		got := mustCollect(t, cfg)
		if !reflect.DeepEqual(got, want) {
			t.Errorf("workers %d: files differ from workers 1", w)
		}
	}
}

func TestGenerateSeedsDiffer(t *testing.T) {
	a := mustCollect(t, sampledata.Config{Files: 40, Seed: 1})
	b := mustCollect(t, sampledata.Config{Files: 40, Seed: 2})
	samePath, sameData := 0, 0
	for i := range a {
		if a[i].Path == b[i].Path {
			samePath++
		}
		if string(a[i].Data) == string(b[i].Data) {
			sameData++
		}
	}
	if sameData != 0 || samePath > 2 {
		t.Errorf("seeds 1 and 2: %d identical files, %d identical paths of 40", sameData, samePath)
	}
}

// TestGenerateGolden pins the bytes of a small corpus, so that a change of platform,
// Go release or dependency that changed the output would be caught. Update the hash
// only for a deliberate change of the generator.
func TestGenerateGolden(t *testing.T) {
	h := sha256.New()
	for _, f := range mustCollect(t, sampledata.Config{Files: 30, Damaged: 15, Seed: 1}) {
		h.Write([]byte(f.Path + "\x00" + f.Kind + "\x00"))
		h.Write(f.Data)
	}
	got := hex.EncodeToString(h.Sum(nil))
	const want = "5ab3c15874bfd330007b015ec2f09f91336ebbe3136a9eeb630353f0e393aa71"
	if got != want {
		t.Errorf("corpus hash for seed 1 = %s, want %s", got, want)
	}
}

func TestGenerateStopsOnYieldErrorAndCancel(t *testing.T) {
	stop := errors.New("stop")
	n := 0
	err := sampledata.Generate(context.Background(), sampledata.Config{Files: 200, Seed: 3, Workers: 2}, func(sampledata.File) error {
		n++
		if n == 5 {
			return stop
		}
		return nil
	})
	if !errors.Is(err, stop) || n != 5 {
		t.Errorf("yield error: got err %v after %d files, want %v after 5", err, n, stop)
	}
	ctx, cancel := context.WithCancel(context.Background())
	n = 0
	err = sampledata.Generate(ctx, sampledata.Config{Files: 200, Seed: 3, Workers: 2}, func(sampledata.File) error {
		n++
		if n == 3 {
			cancel()
		}
		return nil
	})
	if !errors.Is(err, context.Canceled) || n >= 200 {
		t.Errorf("cancel: got err %v after %d files, want context.Canceled early", err, n)
	}
}

func TestConfigValidate(t *testing.T) {
	tests := []struct {
		name    string
		cfg     sampledata.Config
		wantErr string
	}{
		{"ok", sampledata.Config{Files: 10, Damaged: 2}, ""},
		{"zero", sampledata.Config{}, ""},
		{"negative files", sampledata.Config{Files: -1}, "files -1"},
		{"negative damaged", sampledata.Config{Damaged: -2}, "damaged -2"},
		{"negative workers", sampledata.Config{Workers: -1}, "workers -1"},
		{"too many", sampledata.Config{Files: sampledata.MaxFiles, Damaged: 1}, "more than"},
		{"overflow", sampledata.Config{Files: math.MaxInt, Damaged: 1}, "more than"},
	}
	for _, tc := range tests {
		err := tc.cfg.Validate()
		if (err == nil) != (tc.wantErr == "") || (err != nil && !strings.Contains(err.Error(), tc.wantErr)) {
			t.Errorf("%s: Validate() = %v, want error containing %q", tc.name, err, tc.wantErr)
		}
	}
}

func TestWriteDir(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "corpus")
	cfg := sampledata.Config{Files: 12, Damaged: 3, Seed: 5}
	sum, err := sampledata.WriteDir(context.Background(), dir, cfg, false)
	if err != nil {
		t.Fatal(err)
	}
	files := mustCollect(t, cfg)
	var want sampledata.Summary
	want.Dir = dir
	for _, f := range files {
		want.Add(f)
		got, err := os.ReadFile(filepath.Join(dir, filepath.FromSlash(f.Path)))
		if err != nil || string(got) != string(f.Data) {
			t.Errorf("%s: read back %d bytes (err %v), want the %d generated", f.Path, len(got), err, len(f.Data))
		}
	}
	if !reflect.DeepEqual(sum, want) {
		t.Errorf("summary %+v, want %+v", sum, want)
	}
	if sum.Files != 15 || sum.Damaged != 3 || len(sum.Datasets) != 4 {
		t.Errorf("summary counts %d files, %d damaged, %d datasets; want 15, 3, 4", sum.Files, sum.Damaged, len(sum.Datasets))
	}
	if _, err := sampledata.WriteDir(context.Background(), dir, cfg, false); !errors.Is(err, sampledata.ErrNotEmpty) {
		t.Errorf("second WriteDir without force: %v, want ErrNotEmpty", err)
	}
	if _, err := sampledata.WriteDir(context.Background(), dir, cfg, true); err != nil {
		t.Errorf("WriteDir with force: %v", err)
	}
	notDir := filepath.Join(t.TempDir(), "file")
	if err := os.WriteFile(notDir, []byte("x"), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := sampledata.WriteDir(context.Background(), notDir, cfg, false); err == nil {
		t.Error("WriteDir onto a regular file: no error")
	}
}

func TestDemo(t *testing.T) {
	demo := sampledata.Demo()
	if len(demo) != sampledata.DemoFiles {
		t.Fatalf("Demo() has %d files, want %d", len(demo), sampledata.DemoFiles)
	}
	datasets := map[string]int{}
	kinds := map[string]int{}
	for _, f := range demo {
		ds, _, _ := strings.Cut(f.Path, "/")
		datasets[ds]++
		kinds[f.Kind]++
	}
	for _, ds := range []string{sampledata.DatasetRecitals, sampledata.DatasetBand, sampledata.DatasetStudio} {
		if datasets[ds] == 0 {
			t.Errorf("demo corpus has no file in %s", ds)
		}
	}
	for _, k := range []string{sampledata.KindPerformance, sampledata.KindTimecode, sampledata.KindEnsemble, sampledata.KindLeadSheet,
		sampledata.KindSwing, sampledata.KindOddMeter, sampledata.KindPatternBank, sampledata.KindTransposed, sampledata.KindResaved} {
		if kinds[k] == 0 {
			t.Errorf("demo corpus has no %s file", k)
		}
	}
	demo[0].Data[0] = 'X' // the caller's own copy
	if sampledata.Demo()[0].Data[0] != 'M' {
		t.Error("Demo() shares its bytes with earlier callers")
	}
	dmg := sampledata.DemoDamaged()
	cases := sampledata.DamagedCases()
	if len(dmg) != len(cases) {
		t.Fatalf("DemoDamaged() has %d files, want one per case (%d)", len(dmg), len(cases))
	}
	for i, f := range dmg {
		c, ok := f.Damaged()
		if !ok || c.Name != cases[i].Name || !strings.HasSuffix(f.Path, c.Ext) || !strings.HasPrefix(f.Path, sampledata.DatasetSalvage+"/") {
			t.Errorf("damaged file %d: %s kind %s, want case %s", i, f.Path, f.Kind, cases[i].Name)
		}
	}
}
