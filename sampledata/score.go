package sampledata

import "slices"

// quarter is the resolution, in ticks per quarter note, at which every piece is
// composed. Quantized onsets fall on multiples of 40 ticks (sixteenths, sixteenth
// triplets, swung eighths), so they convert exactly to 96, 384, 480 and 960 PPQ.
const quarter = 960

// note is one sounding note of a part.
type note struct {
	start, end int64
	pitch, vel uint8
}

// ccAt is one control change of a part.
type ccAt struct {
	tick     int64
	num, val uint8
}

// part is one instrument: a track in format 1, a channel in format 0.
type part struct {
	name    string
	channel uint8
	program uint8
	drum    bool // channel index 9, General MIDI percussion; no program change
	volume  uint8
	pan     uint8
	notes   []note
	ccs     []ccAt
}

type meterAt struct {
	tick     int64
	num, den uint8
}

type tempoAt struct {
	tick int64
	us   int64 // microseconds per quarter note
}

// score is a piece in ticks at ppq ticks per quarter note, before it is written.
type score struct {
	title  string
	ppq    int64
	key    key
	meters []meterAt
	tempos []tempoAt
	parts  []part
	end    int64 // end of the last bar
}

// bar is one measure of a piece's form.
type bar struct {
	start        int64
	num, den     int
	chord        chord
	beats        []int // beat groups in eighths: 4/4 is 2,2,2,2; 6/8 is 3,3; 7/8 is 2,2,3
	phraseEnd    bool  // last bar of a phrase (cadence, drum fill)
	sectionStart bool
	section      int // index of the section in the form
}

func (b bar) length() int64 { return int64(b.num) * 4 * quarter / int64(b.den) }
func (b bar) end() int64    { return b.start + b.length() }

// beatGroups returns how a meter's bar falls into beats, in eighth notes (common
// practice for simple, compound and the usual groupings of odd meters).
func beatGroups(num, den int) []int {
	switch {
	case den == 8 && num == 7:
		return []int{2, 2, 3}
	case den == 8 && num == 5:
		return []int{3, 2}
	case den == 8 && num%3 == 0:
		g := make([]int, num/3)
		for i := range g {
			g[i] = 3
		}
		return g
	case den == 8:
		g := make([]int, 0, num)
		for n := num; n > 0; n -= 2 {
			g = append(g, min(2, n))
		}
		return g
	default: // x/4: one beat per quarter
		g := make([]int, num)
		for i := range g {
			g[i] = 2
		}
		return g
	}
}

// sectionSpec describes one section of a form; sections with the same letter repeat
// the same music.
type sectionSpec struct {
	letter   byte
	num, den int
	roots    []int // chord root degree per bar
	seventh  bool
	phrase   int // bars per phrase (4 or 8)
}

// makeForm builds a form such as "AABA": each distinct letter gets a progression of
// bars bars built from four-bar progressions, ending with a cadence.
func makeForm(r *rng, k key, form string, bars, phrase int, meter func(letter byte) (int, int), progs [][]int, seventh bool) []sectionSpec {
	byLetter := map[byte]sectionSpec{}
	secs := make([]sectionSpec, 0, len(form))
	for i := 0; i < len(form); i++ {
		l := form[i]
		spec, ok := byLetter[l]
		if !ok {
			num, den := meter(l)
			roots := make([]int, 0, bars)
			for len(roots) < bars {
				roots = append(roots, pick(r, progs)...)
			}
			roots = roots[:bars]
			for p := phrase; p <= bars; p += phrase {
				cadence(roots[:p], p < bars && r.chance(50))
			}
			spec = sectionSpec{letter: l, num: num, den: den, roots: roots, seventh: seventh, phrase: phrase}
			byLetter[l] = spec
		}
		secs = append(secs, spec)
	}
	return secs
}

// layoutBars lays the sections end to end.
func layoutBars(secs []sectionSpec) []bar {
	var out []bar
	var t int64
	for si, s := range secs {
		for i, root := range s.roots {
			b := bar{start: t, num: s.num, den: s.den, chord: chord{root: root, seventh: s.seventh},
				beats: beatGroups(s.num, s.den), phraseEnd: (i+1)%s.phrase == 0 || i == len(s.roots)-1,
				sectionStart: i == 0, section: si}
			out = append(out, b)
			t = b.end()
		}
	}
	return out
}

// meterChanges returns the Time Signature events of the bars.
func meterChanges(bars []bar) []meterAt {
	var m []meterAt
	for _, b := range bars {
		if len(m) == 0 || int(m[len(m)-1].num) != b.num || int(m[len(m)-1].den) != b.den {
			m = append(m, meterAt{tick: b.start, num: uint8(b.num), den: uint8(b.den)})
		}
	}
	return m
}

// Rhythm cells in ticks at 960 per quarter.
var (
	straightCells = [][]int64{
		{960}, {480, 480}, {1440, 480}, {720, 240}, {480, 240, 240}, {240, 240, 480},
		{1920}, {240, 240, 240, 240}, {480}, {960, 480, 480},
	}
	straightWeights = []int{14, 22, 8, 6, 8, 6, 5, 4, 6, 5}
	tripletCells    = [][]int64{{640, 640, 640}, {320, 320, 320}}
)

// melodyStyle shapes a melody line.
type melodyStyle struct {
	base     int // MIDI key of scale degree 0
	lo, hi   int // degree range
	triplets int // percent of cells that are triplets (only in simple meters)
	restPct  int
	vel      int
}

// composeMelody writes a melody over bars (ticks relative to the first bar). It moves
// mostly by step, lands on chord tones on downbeats, recovers from leaps by step in
// the other direction, repeats the first bar's rhythm in the third bar of each
// four-bar group, and ends each phrase on a long chord tone.
func composeMelody(r *rng, k key, bars []bar, st melodyStyle, deg int) []note {
	var out []note
	origin := bars[0].start
	var motif []int64
	lastStep := 0
	stepVals := []int{-1, 1, 0, -2, 2, -3, 3, -4, 4}
	stepW := []int{30, 30, 8, 10, 10, 4, 4, 2, 2}
	for bi, b := range bars {
		start := b.start - origin
		length := b.length()
		var rhythm []int64
		switch {
		case b.phraseEnd:
			if length >= 1920 && r.chance(60) {
				first := length / 2
				if b.den == 8 {
					first = int64(b.beats[0]) * 480
				}
				rhythm = []int64{first, length - first}
			} else {
				rhythm = []int64{length}
			}
		case bi%4 == 2 && motif != nil && sum(motif) == length:
			rhythm = motif
		default:
			rhythm = fillBar(r, length, b.den == 4 && b.num%2 == 0, st.triplets)
			if bi%4 == 0 {
				motif = rhythm
			}
		}
		t := start
		for i, d := range rhythm {
			if i > 0 || bi == 0 {
				// Step, with recovery after a leap.
				step := stepVals[r.weighted(stepW)]
				if lastStep >= 3 || lastStep <= -3 {
					step = -sign(lastStep)
				}
				deg += step
				lastStep = step
			}
			if i == 0 || (b.phraseEnd && i == len(rhythm)-1) {
				nd := nearestChordTone(b.chord, deg, b.phraseEnd && i == len(rhythm)-1)
				lastStep = nd - deg + lastStep
				deg = nd
			}
			if deg < st.lo {
				deg += 2
			}
			if deg > st.hi {
				deg -= 2
			}
			rest := !b.phraseEnd && i > 0 && r.chance(st.restPct)
			if !rest {
				p := k.pitch(st.base, deg, b.chord.root)
				out = append(out, note{start: t, end: t + d, pitch: clampKey(p), vel: uint8(st.vel)})
			}
			t += d
		}
	}
	return out
}

// nearestChordTone returns the chord tone degree nearest deg; rootOnly prefers the
// root (a phrase's last note).
func nearestChordTone(c chord, deg int, rootOnly bool) int {
	for d := 0; d < 7; d++ {
		for _, cand := range []int{deg - d, deg + d} {
			if rootOnly && mod(cand-c.root, 7) != 0 {
				continue
			}
			if c.isTone(cand) {
				return cand
			}
		}
	}
	return deg
}

// fillBar partitions a bar of length ticks into rhythm cells.
func fillBar(r *rng, length int64, simple bool, tripletPct int) []int64 {
	var out []int64
	for rem := length; rem > 0; {
		var cell []int64
		if simple && rem%960 == 0 && r.chance(tripletPct) {
			cell = pick(r, tripletCells)
			if sum(cell) > rem {
				cell = tripletCells[1]
			}
		} else {
			for tries := 0; tries < 8; tries++ {
				c := straightCells[r.weighted(straightWeights)]
				if sum(c) <= rem {
					cell = c
					break
				}
			}
			if cell == nil {
				if rem >= 480 {
					cell = []int64{480}
				} else {
					cell = []int64{rem}
				}
			}
		}
		out = append(out, cell...)
		rem -= sum(cell)
	}
	return out
}

// gate shortens a quantized note to about nine tenths of its value, on the 40-tick
// grid that keeps every tick exact at 96, 384, 480 and 960 PPQ.
func gate(d int64) int64 {
	g := d * 9 / 10
	return max(40, g-g%40)
}

func sum(xs []int64) int64 {
	var s int64
	for _, x := range xs {
		s += x
	}
	return s
}

func sign(x int) int {
	switch {
	case x < 0:
		return -1
	case x > 0:
		return 1
	}
	return 0
}

func clampKey(p int) uint8 {
	for p < 21 {
		p += 12
	}
	for p > 108 {
		p -= 12
	}
	return uint8(p)
}

func clampVel(v int) uint8 { return uint8(max(1, min(127, v))) }

// harmony writes a line a diatonic third (or sixth) below a melody, as band
// arrangements voice a second part (common practice).
func harmony(k key, mel []note, bars []bar, st melodyStyle, interval int) []note {
	out := make([]note, 0, len(mel))
	for _, n := range mel {
		b := barAt(bars, n.start+bars[0].start)
		deg := degreeOf(k, st.base, int(n.pitch))
		p := k.pitch(st.base, deg-interval, b.chord.root)
		out = append(out, note{start: n.start, end: n.end, pitch: clampKey(p), vel: n.vel})
	}
	return out
}

// degreeOf returns the scale degree nearest a MIDI key.
func degreeOf(k key, base, p int) int {
	d := (p - base) * 7 / 12
	best, bestDist := d, 1000
	for c := d - 2; c <= d+2; c++ {
		dist := k.pitch(base, c, 0) - p
		if dist < 0 {
			dist = -dist
		}
		if dist < bestDist {
			best, bestDist = c, dist
		}
	}
	return best
}

// barAt returns the bar sounding at tick t (bars sorted by start).
func barAt(bars []bar, t int64) bar { return bars[barIndex(bars, t)] }

// barIndex returns the index of the bar sounding at tick t.
func barIndex(bars []bar, t int64) int {
	i, _ := slices.BinarySearchFunc(bars, t, func(b bar, t int64) int {
		switch {
		case b.end() <= t:
			return -1
		case b.start > t:
			return 1
		}
		return 0
	})
	return min(i, len(bars)-1)
}

// chordPitches voices a chord in close position from MIDI key lo upwards.
func chordPitches(k key, c chord, lo int) []int {
	base := k.tonicBase(lo - 12)
	var ps []int
	for _, t := range c.tones() {
		p := k.pitch(base, t, c.root)
		for p < lo {
			p += 12
		}
		ps = append(ps, p)
	}
	slices.Sort(ps)
	return ps
}

// bassRoot returns the MIDI key of the chord root in the bass register (36..47 for
// the tonic).
func bassRoot(k key, c chord, deg int) int {
	return k.pitch(k.tonicBase(36), c.root+deg, c.root)
}

// Bass and accompaniment styles.
const (
	bassHeld = iota
	bassRootFifth
	bassEighths
	bassWalking
	bassGroups
	bassWaltz
)

// composeBass writes a bass line: roots on downbeats, fifths and passing tones,
// walking quarters with a chromatic approach to the next root.
func composeBass(r *rng, k key, bars []bar, style, vel int) []note {
	var out []note
	add := func(t, d int64, p int) {
		out = append(out, note{start: t, end: t + gate(d), pitch: clampKey(p), vel: clampVel(vel + r.between(-6, 6))})
	}
	for bi, b := range bars {
		L := b.length()
		root := bassRoot(k, b.chord, 0)
		switch style {
		case bassHeld:
			add(b.start, L, root)
		case bassRootFifth:
			if b.den == 4 && b.num%2 == 0 {
				add(b.start, L/2, root)
				add(b.start+L/2, L/2, bassRoot(k, b.chord, 4))
			} else {
				add(b.start, L, root)
			}
		case bassEighths:
			for t := int64(0); t < L; t += 480 {
				p := root
				if t == L-480 && r.chance(40) {
					p = root + 12
				}
				add(b.start+t, 480, p)
			}
		case bassWalking:
			next := root
			if bi+1 < len(bars) {
				next = bassRoot(k, bars[bi+1].chord, 0)
			}
			beats := int(L / 960)
			deg := 0
			for i := 0; i < beats; i++ {
				p := root
				switch {
				case i == 0:
				case i == beats-1:
					if r.chance(60) {
						p = next - 1
						if r.chance(50) {
							p = next + 1
						}
					} else {
						p = bassRoot(k, b.chord, 4)
					}
				default:
					deg += pick(r, []int{1, 2, 1, -1})
					p = bassRoot(k, b.chord, deg)
				}
				add(b.start+int64(i)*960, 960, p)
			}
		case bassGroups:
			t := b.start
			for gi, g := range b.beats {
				p := root
				if gi%2 == 1 {
					p = bassRoot(k, b.chord, 4)
				}
				add(t, int64(g)*480, p)
				t += int64(g) * 480
			}
		case bassWaltz:
			add(b.start, 960, root)
		}
	}
	return out
}

const (
	chordsHeld = iota
	chordsBeats
	chordsAfterbeat
	chordsComp
	chordsGroups
)

// composeChords writes block chords in the middle register.
func composeChords(r *rng, k key, bars []bar, style, lo, vel int) []note {
	var out []note
	hit := func(t, d int64, c chord) {
		for _, p := range chordPitches(k, c, lo) {
			out = append(out, note{start: t, end: t + d, pitch: clampKey(p), vel: clampVel(vel + r.between(-4, 4))})
		}
	}
	for _, b := range bars {
		L := b.length()
		switch style {
		case chordsHeld:
			hit(b.start, L, b.chord)
		case chordsBeats:
			t := b.start
			for _, g := range b.beats {
				hit(t, gate(int64(g)*480), b.chord)
				t += int64(g) * 480
			}
		case chordsAfterbeat:
			t := b.start
			for gi, g := range b.beats {
				if gi > 0 || len(b.beats) == 1 {
					hit(t, int64(g)*480/2, b.chord)
				}
				t += int64(g) * 480
			}
		case chordsComp:
			for t := int64(0); t < L; t += 480 {
				if (t%960 == 480 && r.chance(35)) || (t == 0 && r.chance(50)) || (t%960 == 0 && r.chance(20)) {
					hit(b.start+t, 400, b.chord)
				}
			}
		case chordsGroups:
			t := b.start
			for _, g := range b.beats {
				hit(t, int64(g)*480-80, b.chord)
				t += int64(g) * 480
			}
		}
	}
	return out
}

// General MIDI 1 percussion key map, channel 10 (from memory of the GM1 sound set).
const (
	drumKick       = 36 // Bass Drum 1
	drumSideStick  = 37
	drumSnare      = 38 // Acoustic Snare
	drumClosedHat  = 42
	drumPedalHat   = 44
	drumOpenHat    = 46
	drumCrash      = 49 // Crash Cymbal 1
	drumRide       = 51 // Ride Cymbal 1
	drumLowTom     = 45
	drumLowMidTom  = 47
	drumHighMidTom = 48
	drumHighTom    = 50
	drumFloorTom   = 43 // High Floor Tom
	drumTambourine = 54
)

const (
	grooveBackbeat = iota // kick and snare alternate on the beats, closed hats on eighths
	grooveSwing           // ride "spang-a-lang" with swung upbeats, hi-hat pedal on 2 and 4
	grooveWaltz           // kick on one, hats and side stick on two and three
	grooveMarch           // snare on eighths with accents, kick on the beats
	grooveGroups          // odd meters: kick on the first group, snare on the last
)

// composeDrums writes a drum part (channel 10) in the given groove, with a crash at
// each section start and a tom fill ending phrases before a new section.
func composeDrums(r *rng, bars []bar, groove int, sixteenthHats bool) []note {
	var out []note
	hit := func(t int64, key int, vel int) {
		out = append(out, note{start: t, end: t + 120, pitch: uint8(key), vel: clampVel(vel + r.between(-8, 8))})
	}
	for bi, b := range bars {
		L := b.length()
		fillFrom := L
		if b.phraseEnd && bi+1 < len(bars) && bars[bi+1].sectionStart && r.chance(70) {
			last := int64(b.beats[len(b.beats)-1]) * 480
			fillFrom = L - last
		}
		if b.sectionStart {
			hit(b.start, drumCrash, 105)
		}
		t := int64(0)
		for gi, g := range b.beats {
			gl := int64(g) * 480
			if t >= fillFrom {
				toms := []int{drumHighTom, drumHighMidTom, drumLowMidTom, drumLowTom, drumFloorTom, drumSnare}
				for x, i := t, 0; x < t+gl; x, i = x+240, i+1 {
					hit(b.start+x, toms[(i+r.intn(2))%len(toms)], 90+i*3)
				}
				t += gl
				continue
			}
			switch groove {
			case grooveBackbeat:
				if gi%2 == 0 {
					hit(b.start+t, drumKick, 100)
					if r.chance(25) {
						hit(b.start+t+gl*3/4, drumKick, 80)
					}
				} else {
					hit(b.start+t, drumSnare, 100)
				}
				step := int64(480)
				if sixteenthHats {
					step = 240
				}
				for x := int64(0); x < gl; x += step {
					v := 70
					if x == 0 {
						v = 90
					}
					k := drumClosedHat
					if gi == len(b.beats)-1 && x == gl-step && r.chance(20) {
						k = drumOpenHat
					}
					hit(b.start+t+x, k, v)
				}
			case grooveSwing:
				hit(b.start+t, drumRide, 95)
				if gi%2 == 1 {
					hit(b.start+t, drumPedalHat, 70)
					hit(b.start+t+480, drumRide, 75) // swung later by the swing map
				} else {
					hit(b.start+t, drumKick, 45)
				}
				if r.chance(15) {
					hit(b.start+t+480, drumSnare, 45)
				}
			case grooveWaltz:
				if gi == 0 {
					hit(b.start+t, drumKick, 100)
				} else {
					hit(b.start+t, drumSideStick, 75)
					hit(b.start+t, drumClosedHat, 70)
				}
			case grooveMarch:
				if gi%2 == 0 {
					hit(b.start+t, drumKick, 100)
				}
				for x := int64(0); x < gl; x += 480 {
					v := 65
					if x == 0 && gi%2 == 1 {
						v = 105
					}
					hit(b.start+t+x, drumSnare, v)
				}
			case grooveGroups:
				switch {
				case gi == 0:
					hit(b.start+t, drumKick, 105)
				case gi == len(b.beats)-1:
					hit(b.start+t, drumSnare, 100)
				case gi%2 == 1:
					hit(b.start+t, drumSnare, 95)
				default:
					hit(b.start+t, drumKick, 90)
				}
				for x := int64(0); x < gl; x += 480 {
					hit(b.start+t+x, drumClosedHat, 70+10*sign(int(gl-x-480)))
				}
			}
			t += gl
		}
	}
	return out
}

// swingTick delays off-beat eighths (and the sixteenths between) to the last
// triplet of the beat: within a beat, 0..480 maps to 0..640 and 480..960 to
// 640..960 (common practice for a 2:1 swing). Onsets off the sixteenth grid (triplets
// already) are left alone.
func swingTick(t int64) int64 {
	x := t % 960
	if x%240 != 0 {
		return t
	}
	b := t - x
	if x <= 480 {
		return b + x*4/3
	}
	return b + 640 + (x-480)*2/3
}

// swing applies swingTick to every note start and end of the part.
func swing(ns []note) {
	for i := range ns {
		ns[i].start = swingTick(ns[i].start)
		ns[i].end = swingTick(ns[i].end)
		if ns[i].end <= ns[i].start {
			ns[i].end = ns[i].start + 80
		}
	}
}

// dynamics shapes velocities: each phrase swells towards its middle and falls back,
// downbeats are accented, and a little jitter keeps repeated notes apart.
func dynamics(r *rng, ns []note, bars []bar, swell, accent, jitter int) {
	for i := range ns {
		idx := barIndex(bars, ns[i].start)
		b := bars[idx]
		pos := idx % 4 // place in a four-bar group
		arc := []int{0, 1, 2, 1}[pos] * swell / 2
		v := int(ns[i].vel) + arc + r.between(-jitter, jitter)
		if ns[i].start == b.start {
			v += accent
		}
		ns[i].vel = clampVel(v)
	}
}

// shiftNotes moves notes by dt ticks.
func shiftNotes(ns []note, dt int64) []note {
	out := make([]note, len(ns))
	for i, n := range ns {
		n.start += dt
		n.end += dt
		out[i] = n
	}
	return out
}
