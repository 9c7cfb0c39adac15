package sampledata

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"sync"

	"golang.org/x/sync/errgroup"
)

// File is one generated file.
type File struct {
	// Path is the slash-separated path relative to the corpus root:
	// "<dataset>/<name>.mid" (".mid.gz" for one damaged case).
	Path string
	// Data is the file's bytes.
	Data []byte
	// Kind names the composer (KindPerformance, ...), KindTransposed or KindResaved
	// for a near-duplicate of the file just before it, or "damaged/<case>" for a
	// file of the damaged set (see DamagedCases).
	Kind string
}

// Damaged returns the damaged case of a file of the damaged set.
func (f File) Damaged() (DamagedCase, bool) {
	name, ok := strings.CutPrefix(f.Kind, KindDamaged+"/")
	if !ok {
		return DamagedCase{}, false
	}
	for _, c := range damagedCases {
		if c.Name == name {
			return c, true
		}
	}
	return DamagedCase{}, false
}

// Config says what to generate.
type Config struct {
	// Files is the number of good files.
	Files int
	// Seed selects the corpus; the same seed gives byte-identical files everywhere.
	Seed uint64
	// Damaged is the number of damaged files, generated after the good ones, cycling
	// through DamagedCases.
	Damaged int
	// Workers is the number of files generated in parallel; 0 means GOMAXPROCS. The
	// output does not depend on it.
	Workers int
}

// MaxFiles bounds Files+Damaged in one Config (file names have room for it).
const MaxFiles = 10_000_000

// Validate reports a config that cannot be generated.
func (c Config) Validate() error {
	switch {
	case c.Files < 0:
		return fmt.Errorf("files %d: must not be negative", c.Files)
	case c.Damaged < 0:
		return fmt.Errorf("damaged %d: must not be negative", c.Damaged)
	case c.Workers < 0:
		return fmt.Errorf("workers %d: must not be negative", c.Workers)
	case c.Files > MaxFiles || c.Damaged > MaxFiles-c.Files:
		return fmt.Errorf("files %d + damaged %d: more than %d in all", c.Files, c.Damaged, MaxFiles)
	}
	return nil
}

// Generate makes the corpus of cfg and calls yield with each file in a stable order
// (the good files by index, then the damaged ones), whatever cfg.Workers. Files are
// composed in parallel, each from its own random stream derived from (Seed, index),
// and at most a few per worker are held in memory at once. It stops at the first
// error of yield or when ctx is done.
func Generate(ctx context.Context, cfg Config, yield func(File) error) error {
	if err := cfg.Validate(); err != nil {
		return fmt.Errorf("generate: %w", err)
	}
	n := cfg.Files + cfg.Damaged
	workers := cfg.Workers
	if workers == 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	workers = max(1, min(workers, n))
	if workers == 1 {
		for i := 0; i < n; i++ {
			if err := ctx.Err(); err != nil {
				return err
			}
			f, err := makeFile(cfg, i)
			if err != nil {
				return err
			}
			if err := yield(f); err != nil {
				return err
			}
		}
		return nil
	}

	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	g, gctx := errgroup.WithContext(ctx)
	type result struct {
		i int
		f File
	}
	jobs := make(chan int)
	results := make(chan result, workers)
	window := make(chan struct{}, 4*workers) // files dispatched but not yet yielded
	g.Go(func() error {
		defer close(jobs)
		for i := 0; i < n; i++ {
			select {
			case window <- struct{}{}:
			case <-gctx.Done():
				return gctx.Err()
			}
			select {
			case jobs <- i:
			case <-gctx.Done():
				return gctx.Err()
			}
		}
		return nil
	})
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		g.Go(func() error {
			defer wg.Done()
			for i := range jobs {
				f, err := makeFile(cfg, i)
				if err != nil {
					return err
				}
				select {
				case results <- result{i, f}:
				case <-gctx.Done():
					return gctx.Err()
				}
			}
			return nil
		})
	}
	go func() { wg.Wait(); close(results) }()

	pending := make(map[int]File, 4*workers) // looked up by index only, never ranged over
	next := 0
	var yerr error
	for res := range results {
		if yerr != nil {
			continue // drain until the workers stop
		}
		pending[res.i] = res.f
		for {
			f, ok := pending[next]
			if !ok {
				break
			}
			delete(pending, next)
			next++
			if err := yield(f); err != nil {
				yerr = err
				cancel()
				break
			}
			<-window
		}
	}
	gerr := g.Wait()
	switch {
	case yerr != nil:
		return yerr
	case gerr != nil && !errors.Is(gerr, context.Canceled):
		return gerr
	case ctx.Err() != nil:
		return ctx.Err()
	case gerr != nil:
		return gerr
	}
	return nil
}

// slot is the plan of one good file: which composer, and whether it duplicates the
// file before it.
type slot struct {
	index int
	kind  string
	// forceMeterChange makes an odd-meter piece change meter mid-piece.
	forceMeterChange bool
}

// prefixKinds are the kinds of the first files of every corpus, so that even a small
// corpus has each kind, a transposed and a resaved near-duplicate, a format-0, a
// format-2 and an SMPTE file, and a meter change.
var prefixKinds = []string{
	KindPerformance, KindTransposed, KindEnsemble, KindResaved, KindLeadSheet,
	KindTimecode, KindPatternBank, KindSwing, KindOddMeter,
}

// kindWeights is the mix of the files after the prefix, in percent; "dup" becomes a
// near-duplicate of the previous file when that one can be duplicated.
var (
	kindNames   = []string{KindPerformance, KindTimecode, KindEnsemble, KindLeadSheet, KindSwing, KindOddMeter, KindPatternBank, "dup"}
	kindWeights = []int{28, 3, 24, 8, 12, 12, 3, 10}
)

// streamTag separates the random streams used for a file's plan and its music.
const (
	tagPlan  = 0x706c616e // "plan"
	tagMusic = 0x6d757369 // "musi"
	tagDup   = 0x64757021 // "dup!"
)

func rawKind(seed uint64, i int) string {
	if i < len(prefixKinds) {
		return prefixKinds[i]
	}
	r := newRNG(seed^tagPlan, splitmix64(uint64(i)))
	return kindNames[r.weighted(kindWeights)]
}

func planSlot(seed uint64, i int) slot {
	k := rawKind(seed, i)
	s := slot{index: i, kind: k, forceMeterChange: i == len(prefixKinds)-1}
	if k == "dup" {
		s.kind = KindEnsemble
		if i > 0 {
			switch prev := rawKind(seed, i-1); prev {
			case KindPerformance:
				s.kind = KindTransposed
			case KindEnsemble, KindLeadSheet, KindSwing, KindOddMeter:
				r := newRNG(seed^tagDup, splitmix64(uint64(i)))
				s.kind = pick(r, []string{KindTransposed, KindResaved})
			}
		}
	}
	return s
}

// Performance pieces are written at these PPQs; quantized pieces at the ensemble ones.
var (
	performancePPQs = []int64{384, 480, 960}
	ensemblePPQs    = []int64{96, 384, 480, 960}
)

// SMPTE divisions used by timecode performances: frame code and ticks per frame
// (25 × 40 is millisecond resolution, SMF 1.0's own example of time-code use).
var smpteDivisions = [][2]int{{25, 40}, {25, 40}, {30, 80}, {24, 50}, {29, 40}}

// compose makes the piece of a good slot that is not a duplicate.
func compose(seed uint64, s slot) *piece {
	r := newRNG(seed^tagMusic, splitmix64(uint64(s.index)))
	p := &piece{kind: s.kind}
	lay := layout{format: 1, offVel0: r.chance(40), noRunning: r.chance(15)}
	switch s.kind {
	case KindPerformance, KindTimecode:
		ppq := pick(r, performancePPQs)
		if s.kind == KindTimecode {
			ppq = quarter
			d := pick(r, smpteDivisions)
			lay.fps, lay.tpf = d[0], d[1]
		} else {
			lay.ppq = ppq
		}
		if r.chance(35) {
			lay.format = 0
		}
		sc := composePerformance(r, ppq)
		beats := int(sc.meters[0].num)
		if sc.meters[0].den == 8 {
			beats = 2
		}
		p.title = makeTitle(r, pick(r, recitalForms[beats]))
		sc.title = p.title + " in " + sc.key.name()
		p.scores = []*score{sc}
	case KindPatternBank:
		lay.format = 2
		lay.ppq = pick(r, ensemblePPQs)
		p.title = makeTitle(r, "patterns")
		p.scores = composePatternBank(r)
		p.quantized = true
	default:
		lay.ppq = pick(r, ensemblePPQs)
		if s.kind == KindLeadSheet {
			lay.format = 0
		}
		sc := composeEnsemble(r, s.kind, s.forceMeterChange)
		forms := bandForms
		if datasetOf[s.kind] == DatasetStudio {
			forms = studioForms
		}
		p.title = makeTitle(r, pick(r, forms))
		sc.title = p.title
		p.scores = []*score{sc}
		p.quantized = true
	}
	p.lay = lay
	p.slug = slugOf(p.title)
	return p
}

// composeSlot makes the piece of any good slot, duplicates included, and its path.
func composeSlot(seed uint64, i int) (*piece, string, string) {
	s := planSlot(seed, i)
	switch s.kind {
	case KindTransposed, KindResaved:
		base := compose(seed, planSlot(seed, i-1))
		r := newRNG(seed^tagDup, splitmix64(uint64(i))^tagMusic)
		name := base.slug
		if s.kind == KindTransposed {
			sc := base.scores[0]
			lo, hi := sc.pitchRange()
			shift := 0
			for tries := 0; tries < 16 && shift == 0; tries++ {
				t := pick(r, []int{-5, -4, -3, -2, -1, 1, 2, 3, 4, 5, 6})
				if lo+t >= 21 && hi+t <= 108 {
					shift = t
				}
			}
			if shift == 0 {
				shift = 1
			}
			sc.transpose(shift)
			if base.kind == KindPerformance { // its title names the key
				sc.title = base.title + " in " + sc.key.name()
			}
			name += "-alt-key"
		} else {
			old := base.lay.ppq
			for base.lay.ppq == old {
				base.lay.ppq = pick(r, ensemblePPQs)
			}
			base.lay.offVel0 = r.chance(40)
			base.lay.noRunning = r.chance(15)
			name += "-" + strconv.Itoa(int(base.lay.ppq)) + "ppq"
		}
		return base, s.kind, datasetOf[base.kind] + "/" + fileStem(i, name) + ".mid"
	}
	p := compose(seed, s)
	return p, s.kind, datasetOf[s.kind] + "/" + fileStem(i, p.slug) + ".mid"
}

func fileStem(i int, name string) string { return fmt.Sprintf("%05d-%s", i, name) }

// makeFile makes file i of the corpus of cfg.
func makeFile(cfg Config, i int) (File, error) {
	if i >= cfg.Files {
		return makeDamaged(cfg.Seed, i, i-cfg.Files)
	}
	p, kind, pth := composeSlot(cfg.Seed, i)
	data, err := render(p)
	if err != nil {
		return File{}, fmt.Errorf("generate file %d (%s): %w", i, pth, err)
	}
	return File{Path: pth, Data: data, Kind: kind}, nil
}

// Summary tells what WriteDir wrote.
type Summary struct {
	Dir      string
	Files    int   // files written, damaged included
	Damaged  int   // of which damaged
	Bytes    int64 // total size
	Datasets []Count
	Kinds    []Count
}

// Count is a number of files by name (a dataset or a kind).
type Count struct {
	Name  string
	Files int
}

// Add counts one file.
func (s *Summary) Add(f File) {
	s.Files++
	if _, ok := f.Damaged(); ok {
		s.Damaged++
	}
	s.Bytes += int64(len(f.Data))
	ds, _, _ := strings.Cut(f.Path, "/")
	s.Datasets = addCount(s.Datasets, ds)
	s.Kinds = addCount(s.Kinds, f.Kind)
}

func addCount(cs []Count, name string) []Count {
	i, found := slices.BinarySearchFunc(cs, name, func(c Count, n string) int {
		switch {
		case c.Name < n:
			return -1
		case c.Name > n:
			return 1
		}
		return 0
	})
	if found {
		cs[i].Files++
		return cs
	}
	return slices.Insert(cs, i, Count{Name: name, Files: 1})
}

// ErrNotEmpty is returned by WriteDir for a directory that already holds files.
var ErrNotEmpty = errors.New("directory is not empty")

// WriteDir generates the corpus of cfg into dir, one sub-folder per dataset,
// creating dir if needed. It refuses a dir that is not empty unless force is set (it
// then overwrites files of the same names and leaves other files alone).
func WriteDir(ctx context.Context, dir string, cfg Config, force bool) (Summary, error) {
	sum := Summary{Dir: dir}
	if err := cfg.Validate(); err != nil {
		return sum, fmt.Errorf("write %s: %w", dir, err)
	}
	if !force {
		empty, err := isEmptyDir(dir)
		if err != nil {
			return sum, fmt.Errorf("write %s: %w", dir, err)
		}
		if !empty {
			return sum, fmt.Errorf("write %s: %w (use force to write into it)", dir, ErrNotEmpty)
		}
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return sum, fmt.Errorf("write %s: %w", dir, err)
	}
	made := map[string]bool{}
	err := Generate(ctx, cfg, func(f File) error {
		sub := path.Dir(f.Path)
		if !made[sub] {
			if err := os.MkdirAll(filepath.Join(dir, filepath.FromSlash(sub)), 0o755); err != nil {
				return fmt.Errorf("write %s: %w", dir, err)
			}
			made[sub] = true
		}
		if err := os.WriteFile(filepath.Join(dir, filepath.FromSlash(f.Path)), f.Data, 0o644); err != nil {
			return fmt.Errorf("write %s: %w", dir, err)
		}
		sum.Add(f)
		return nil
	})
	return sum, err
}

// isEmptyDir reports whether dir is missing or an empty directory.
func isEmptyDir(dir string) (bool, error) {
	f, err := os.Open(dir)
	if errors.Is(err, os.ErrNotExist) {
		return true, nil
	}
	if err != nil {
		return false, err
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return false, err
	}
	if !st.IsDir() {
		return false, fmt.Errorf("%s is not a directory", dir)
	}
	_, err = f.Readdirnames(1)
	if errors.Is(err, io.EOF) {
		return true, nil
	}
	return false, err
}
