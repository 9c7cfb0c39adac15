package sampledata

import (
	"slices"
	"strconv"
)

// Kinds of file in a generated corpus. A file's Kind says which composer made it;
// near-duplicates carry KindTransposed or KindResaved and directly follow the file
// they duplicate; damaged files carry "damaged/" and the DamagedCase name.
const (
	KindPerformance = "performance"          // expressive solo piano, unquantized, pedal, rubato tempo events
	KindTimecode    = "timecode-performance" // the same, written with SMPTE division
	KindEnsemble    = "ensemble"             // quantized band arrangement, several programs, drums
	KindLeadSheet   = "lead-sheet"           // melody, chords, bass (and drums) in one format-0 track
	KindSwing       = "swing"                // swung eighths or 12/8 shuffle, walking bass, ride cymbal
	KindOddMeter    = "odd-meter"            // 7/8, 5/4, 6/8, 3/4 and meter changes, tempo changes
	KindPatternBank = "pattern-bank"         // format 2: each track an independent drum-and-bass pattern
	KindTransposed  = "transposed"           // the previous file's piece shifted in pitch
	KindResaved     = "resaved"              // the previous file's piece saved at another PPQ
	KindDamaged     = "damaged"              // prefix of the Kind of damaged files: "damaged/<case>"
)

// Invented datasets: the folder of each kind.
const (
	// DatasetRecitals is the Velmora Conservatory's recital archive: solo piano
	// performances captured from a MIDI-equipped grand in its recital hall.
	DatasetRecitals = "velmora-recitals"
	// DatasetBand is the Tollemere Town Band's arrangement library: sequenced
	// arrangements and lead sheets made for rehearsal tracks.
	DatasetBand = "tollemere-band"
	// DatasetStudio is Kestrel Lane Studio's sketchbook: swing charts, odd-meter
	// studies and drum-and-bass pattern banks.
	DatasetStudio = "kestrel-lane"
	// DatasetSalvage holds the damaged files, recovered from the band's old floppy disks.
	DatasetSalvage = "tollemere-salvage"
)

var datasetOf = map[string]string{
	KindPerformance: DatasetRecitals, KindTimecode: DatasetRecitals,
	KindEnsemble: DatasetBand, KindLeadSheet: DatasetBand,
	KindSwing: DatasetStudio, KindOddMeter: DatasetStudio, KindPatternBank: DatasetStudio,
}

// piece is a composed file before it is written.
type piece struct {
	kind      string
	title     string
	slug      string
	scores    []*score // one, or one per track for format 2
	lay       layout
	quantized bool
}

// tempo bounds every generated Set Tempo stays within: 40..240 BPM.
const (
	minTempoUS = 250_000
	maxTempoUS = 1_500_000
)

func usOfBPM(bpm int) int64 { return 60_000_000 / int64(bpm) }

func clampTempo(us int64) int64 { return max(minTempoUS, min(maxTempoUS, us)) }

func randomKey(r *rng, minorPct int) key {
	return key{tonic: r.intn(12), minor: r.chance(minorPct)}
}

func progsFor(k key) [][]int {
	if k.minor {
		return minorProgressions
	}
	return majorProgressions
}

// General MIDI 1 programs (0-based, from memory of the GM1 sound set).
var (
	leadPrograms    = []uint8{56, 65, 66, 73, 71, 40, 68} // trumpet, alto and tenor sax, flute, clarinet, violin, oboe
	counterPrograms = []uint8{57, 60, 70, 42, 71}         // trombone, french horn, bassoon, cello, clarinet
	chordPrograms   = []uint8{0, 4, 48, 61, 16, 24, 25}   // grand, e-piano, strings, brass section, organ, guitars
	bassPrograms    = []uint8{32, 33, 34, 58, 43}         // acoustic, finger, pick bass, tuba, contrabass
	pianoPrograms   = []uint8{0, 0, 0, 0, 1}              // acoustic grand, bright acoustic
)

func forms(r *rng) string { return pick(r, []string{"AABA", "ABA", "AB", "ABAB", "AAB"}) }

// composePerformance writes a solo piano piece and performs it: tempo rubato as tempo
// events on every beat, onsets spread by human timing, velocity dynamics and
// sustain pedal.
func composePerformance(r *rng, ppq int64) *score {
	s, bars := scorePerformance(r)
	s.resample(ppq)
	perform(r, s, bars, ppq, 0)
	return s
}

// scorePerformance composes the written (quantized) score of a solo piano piece,
// with its rubato tempo map, at 960 ticks per quarter.
func scorePerformance(r *rng) (*score, []bar) {
	k := randomKey(r, 40)
	num, den := 4, 4
	switch r.weighted([]int{50, 30, 20}) {
	case 1:
		num = 3
	case 2:
		num, den = 6, 8
	}
	bpm := r.between(58, 126)
	if den == 8 {
		bpm = r.between(96, 150) // quarter-note tempo of a moderate 6/8
	}
	phrase := pick(r, []int{4, 8})
	secs := makeForm(r, k, forms(r), 8, phrase, func(byte) (int, int) { return num, den }, progsFor(k), false)
	bars := layoutBars(secs)
	end := bars[len(bars)-1].end()

	rh := melodyStyle{base: k.tonicBase(53), lo: 2, hi: 13, triplets: 6, restPct: 4, vel: r.between(62, 80)}
	melody := sectionMusic(r, k, bars, secs, func(bs []bar) []note { return composeMelody(r, k, bs, rh, 7) })
	// Right hand doubles downbeats with a chord tone a third or sixth below.
	var rhNotes []note
	for _, n := range melody {
		rhNotes = append(rhNotes, n)
		b := barAt(bars, n.start)
		if n.start == b.start && r.chance(45) {
			deg := degreeOf(k, rh.base, int(n.pitch))
			p := k.pitch(rh.base, deg-pick(r, []int{2, 5}), b.chord.root)
			rhNotes = append(rhNotes, note{start: n.start, end: n.end, pitch: clampKey(p), vel: uint8(max(1, int(n.vel)-14))})
		}
	}
	lh := composeLeftHand(r, k, bars, rh.vel-14)
	dynamics(r, rhNotes, bars, 16, 6, 5)
	dynamics(r, lh, bars, 12, 4, 5)

	s := &score{ppq: quarter, key: k, meters: meterChanges(bars), end: end}
	s.tempos = rubato(r, bars, usOfBPM(bpm))
	prog := pick(r, pianoPrograms)
	if r.chance(55) {
		s.parts = []part{{name: "piano", program: prog, notes: append(rhNotes, lh...), volume: 100, pan: 64}}
	} else {
		s.parts = []part{
			{name: "right hand", program: prog, notes: rhNotes, volume: 100, pan: 64},
			{name: "left hand", program: prog, notes: lh, volume: 100, pan: 64},
		}
	}
	return s, bars
}

// composeLeftHand writes a piano accompaniment suited to the meter: Alberti figures,
// broken chords, waltz bass-chord-chord or block chords.
func composeLeftHand(r *rng, k key, bars []bar, vel int) []note {
	style := r.intn(3)
	if bars[0].num == 3 && bars[0].den == 4 && r.chance(60) {
		style = 3
	}
	var out []note
	for _, b := range bars {
		L := b.length()
		root := bassRoot(k, b.chord, 0) + 12 // the tenor register
		tones := []int{root, k.pitch(k.tonicBase(48), b.chord.root+4, b.chord.root), k.pitch(k.tonicBase(48), b.chord.root+2, b.chord.root) + 12}
		switch {
		case style == 3: // waltz
			out = append(out, note{start: b.start, end: b.start + 900, pitch: clampKey(root - 12), vel: clampVel(vel + 6)})
			for _, t := range []int64{960, 1920} {
				for _, p := range chordPitches(k, b.chord, 53) {
					out = append(out, note{start: b.start + t, end: b.start + t + 700, pitch: clampKey(p), vel: clampVel(vel - 6)})
				}
			}
		case style == 0: // Alberti: root, fifth, third, fifth
			order := []int{0, 1, 2, 1}
			for i, t := 0, int64(0); t < L; i, t = i+1, t+480 {
				out = append(out, note{start: b.start + t, end: b.start + t + 470, pitch: clampKey(tones[order[i%4]]), vel: clampVel(vel)})
			}
		case style == 1: // broken chord rising and falling
			order := []int{0, 1, 2, 1, 2, 1}
			for i, t := 0, int64(0); t < L; i, t = i+1, t+480 {
				p := tones[order[i%len(order)]]
				if i%len(order) == 0 && t == 0 {
					p -= 12
				}
				out = append(out, note{start: b.start + t, end: b.start + t + 900, pitch: clampKey(p), vel: clampVel(vel)})
			}
		default: // block chord over a held root
			out = append(out, note{start: b.start, end: b.end(), pitch: clampKey(root - 12), vel: clampVel(vel + 4)})
			half := L
			if L >= 1920 && L%960 == 0 {
				half = L / 2
			}
			for t := int64(0); t < L; t += half {
				for _, p := range chordPitches(k, b.chord, 52) {
					out = append(out, note{start: b.start + t, end: b.start + t + half - 60, pitch: clampKey(p), vel: clampVel(vel - 4)})
				}
			}
		}
	}
	return out
}

// sectionMusic composes a line once per distinct section letter and repeats it
// wherever the letter returns.
func sectionMusic(r *rng, k key, bars []bar, secs []sectionSpec, compose func([]bar) []note) []note {
	cache := map[byte][]note{}
	var out []note
	for si, spec := range secs {
		var bs []bar
		for _, b := range bars {
			if b.section == si {
				bs = append(bs, b)
			}
		}
		ns, ok := cache[spec.letter]
		if !ok {
			ns = compose(bs) // relative to the section start
			cache[spec.letter] = ns
		}
		out = append(out, shiftNotes(ns, bs[0].start)...)
	}
	return out
}

// rubato returns tempo events on every beat: each four-bar group pushes ahead a
// little towards its middle and broadens at its end, a phrase-ending bar slows
// further, and the last bar slows most (a final ritardando).
func rubato(r *rng, bars []bar, base int64) []tempoAt {
	var ts []tempoAt
	for bi, b := range bars {
		t := b.start
		n := len(b.beats)
		for gi, g := range b.beats {
			permille := []int{0, -25, -35, 10}[bi%4] + r.between(-20, 20)
			if b.phraseEnd {
				permille += 40 * (gi + 1) * 4 / n
			}
			if bi == len(bars)-1 {
				permille += 80 * (gi + 1) * 4 / n
			}
			us := clampTempo(base * int64(1000+permille) / 1000)
			// A dotted-quarter beat in x/8 lasts g eighths: the tempo stays in µs per quarter.
			ts = append(ts, tempoAt{tick: t, us: us})
			t += int64(g) * 480
		}
	}
	return ts
}

// resample converts every tick of the score to ppq ticks per quarter (exact for
// quantized material, whose ticks are multiples of 40 at 960).
func (s *score) resample(ppq int64) {
	if ppq == s.ppq {
		return
	}
	conv := func(t int64) int64 { return t * ppq / s.ppq }
	for i := range s.meters {
		s.meters[i].tick = conv(s.meters[i].tick)
	}
	for i := range s.tempos {
		s.tempos[i].tick = conv(s.tempos[i].tick)
	}
	for pi := range s.parts {
		p := &s.parts[pi]
		for i := range p.notes {
			p.notes[i].start, p.notes[i].end = conv(p.notes[i].start), conv(p.notes[i].end)
		}
		for i := range p.ccs {
			p.ccs[i].tick = conv(p.ccs[i].tick)
		}
	}
	s.end = conv(s.end)
	s.ppq = ppq
}

// usAt returns the tempo in effect at tick t.
func (s *score) usAt(t int64) int64 {
	us := int64(500_000) // SMF 1.0 default, 120 BPM
	for _, tc := range s.tempos {
		if tc.tick > t {
			break
		}
		us = tc.us
	}
	return us
}

// msToTicks converts a signed offset in milliseconds at tick t to ticks.
func (s *score) msToTicks(t int64, ms int) int64 {
	return int64(ms) * 1000 * s.ppq / s.usAt(t)
}

// perform unquantizes a score at its own resolution like a pianist playing it: each
// onset moves by a bell-shaped human spread of sigma ms (6 to 22 ms for a piece,
// chosen when sigma is 0), melody notes lead the accompaniment by a few ms, note
// ends vary (legato overlaps in the right hand), and the sustain pedal is changed at
// every chord change just after the new harmony sounds (legato pedalling).
func perform(r *rng, s *score, bars []bar, ppq int64, sigma int) {
	if sigma == 0 {
		sigma = r.between(6, 22)
	}
	conv := func(t int64) int64 { return t * ppq / quarter }
	for pi := range s.parts {
		p := &s.parts[pi]
		lead := p.name == "right hand"
		for i := range p.notes {
			n := &p.notes[i]
			on := r.spread(sigma)
			if lead || (p.name == "piano" && n.pitch >= 60) {
				on -= r.between(0, 12)
			}
			dur := n.end - n.start
			off := r.spread(sigma)
			if lead {
				off += r.between(10, 40) // legato overlap
			}
			n.start = max(0, n.start+s.msToTicks(n.start, on))
			n.end = n.start + dur + s.msToTicks(n.start, off)
			if n.end <= n.start+ppq/32 {
				n.end = n.start + ppq/32 + 1
			}
		}
	}
	if r.chance(85) {
		down := uint8(pick(r, []int{127, 127, 127, 100, 110}))
		var ccs []ccAt
		for bi, b := range bars {
			t := conv(b.start)
			if bi == 0 {
				ccs = append(ccs, ccAt{tick: t + s.msToTicks(t, r.between(5, 40)), num: 64, val: down})
				continue
			}
			up := t + s.msToTicks(t, r.between(15, 60))
			ccs = append(ccs, ccAt{tick: up, num: 64, val: 0})
			ccs = append(ccs, ccAt{tick: up + s.msToTicks(t, r.between(40, 110)), num: 64, val: down})
		}
		ccs = append(ccs, ccAt{tick: s.end - 1, num: 64, val: 0})
		s.parts[len(s.parts)-1].ccs = append(s.parts[len(s.parts)-1].ccs, ccs...)
	}
	// The performance may ring past the written end.
	for _, p := range s.parts {
		for _, n := range p.notes {
			s.end = max(s.end, n.end+1)
		}
	}
}

func cmpInt(a, b int64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// ensembleStyle is a band arrangement's style: meter, groove, tempo range.
type ensembleStyle struct {
	name       string
	num, den   int
	groove     int
	bass       int
	chords     int
	minBPM     int
	maxBPM     int
	sixteenths bool
}

var ensembleStyles = []ensembleStyle{
	{"march", 2, 4, grooveMarch, bassRootFifth, chordsAfterbeat, 108, 128, false},
	{"quick march", 6, 8, grooveMarch, bassGroups, chordsAfterbeat, 112, 132, false},
	{"waltz", 3, 4, grooveWaltz, bassWaltz, chordsAfterbeat, 132, 176, false},
	{"ballad", 4, 4, grooveBackbeat, bassRootFifth, chordsHeld, 64, 84, true},
	{"pop", 4, 4, grooveBackbeat, bassEighths, chordsBeats, 96, 132, false},
	{"two-step", 4, 4, grooveBackbeat, bassRootFifth, chordsAfterbeat, 100, 124, false},
}

// composeEnsemble writes a quantized band arrangement: lead, optional second part in
// thirds, chords, bass and drums, with an optional tempo change at the second
// section and a final ritardando.
func composeEnsemble(r *rng, kind string, forceMeterChange bool) *score {
	k := randomKey(r, 30)
	st := pick(r, ensembleStyles)
	var meterB [2]int
	switch kind {
	case KindSwing:
		st = ensembleStyle{"swing", 4, 4, grooveSwing, bassWalking, chordsComp, 100, 200, false}
		if r.chance(30) {
			st = ensembleStyle{"shuffle", 12, 8, grooveGroups, bassGroups, chordsGroups, 80, 120, false}
		}
	case KindOddMeter:
		m := pick(r, [][2]int{{7, 8}, {7, 8}, {5, 4}, {5, 8}, {9, 8}, {3, 4}, {6, 8}})
		st = ensembleStyle{"study", m[0], m[1], grooveGroups, bassGroups, chordsGroups, 90, 170, false}
		if forceMeterChange || r.chance(50) {
			meterB = pick(r, [][2]int{{4, 4}, {3, 4}, {7, 8}, {6, 8}, {5, 4}})
			if meterB == m {
				meterB = [2]int{4, 4}
			}
		}
	case KindLeadSheet:
		st = pick(r, []ensembleStyle{ensembleStyles[2], ensembleStyles[3], ensembleStyles[4], ensembleStyles[5]})
	}
	meter := func(l byte) (int, int) {
		if l == 'B' && meterB[0] != 0 {
			return meterB[0], meterB[1]
		}
		return st.num, st.den
	}
	progs := progsFor(k)
	if kind == KindSwing {
		progs = swingProgressions
	}
	bars := 8
	if st.num == 2 && st.den == 4 {
		bars = 16
	}
	form := forms(r)
	if forceMeterChange && len(form) < 3 {
		form = "ABA"
	}
	secs := makeForm(r, k, form, bars, pick(r, []int{4, 8}), meter, progs, kind == KindSwing)
	bs := layoutBars(secs)
	s := &score{ppq: quarter, key: k, meters: meterChanges(bs), end: bs[len(bs)-1].end()}

	bpm := r.between(st.minBPM, st.maxBPM)
	s.tempos = []tempoAt{{tick: 0, us: usOfBPM(bpm)}}
	if kind == KindOddMeter || r.chance(20) {
		// A tempo change for the second section, back again for the return.
		for si, spec := range secs {
			if si == 0 {
				continue
			}
			us := usOfBPM(bpm)
			if spec.letter == 'B' {
				us = clampTempo(us * int64(1000+pick(r, []int{-250, -150, -100, 100, 150, 200})) / 1000)
			}
			for _, b := range bs {
				if b.section == si && b.sectionStart {
					s.tempos = append(s.tempos, tempoAt{tick: b.start, us: us})
				}
			}
		}
	}
	if r.chance(40) { // final ritardando over the last bar, beat by beat
		last := bs[len(bs)-1]
		t := last.start
		for gi, g := range last.beats {
			s.tempos = append(s.tempos, tempoAt{tick: t, us: clampTempo(usOfBPM(bpm) * int64(1000+120*(gi+1)) / 1000)})
			t += int64(g) * 480
		}
	}
	s.tempos = dedupTempos(s.tempos)

	lead := melodyStyle{base: k.tonicBase(60), lo: 0, hi: 11, triplets: 8, restPct: 8, vel: r.between(84, 100)}
	if kind == KindSwing {
		lead.triplets = 20
	}
	if st.den == 8 {
		lead.triplets = 0
	}
	melody := sectionMusic(r, k, bs, secs, func(b []bar) []note { return composeMelody(r, k, b, lead, 4) })
	dynamics(r, melody, bs, 10, 6, 3)
	ch := uint8(0)
	next := func() uint8 {
		c := ch
		ch++
		if ch == 9 {
			ch++
		}
		return c
	}
	s.parts = append(s.parts, part{name: "melody", channel: next(), program: pick(r, leadPrograms), notes: melody, volume: 110, pan: 64})
	if kind == KindEnsemble && r.chance(50) {
		h := harmony(k, melody, bs, lead, pick(r, []int{2, 5}))
		for i := range h {
			h[i].vel = clampVel(int(h[i].vel) - 10)
		}
		s.parts = append(s.parts, part{name: "second part", channel: next(), program: pick(r, counterPrograms), notes: h, volume: 96, pan: 40})
	}
	chProg := pick(r, chordPrograms)
	if kind == KindSwing {
		chProg = pick(r, []uint8{0, 4})
	}
	s.parts = append(s.parts, part{name: "chords", channel: next(), program: chProg,
		notes: composeChords(r, k, bs, st.chords, pick(r, []int{52, 55, 57}), r.between(60, 78)), volume: 90, pan: 88})
	bassProg := pick(r, bassPrograms)
	if kind == KindSwing {
		bassProg = 32
	}
	s.parts = append(s.parts, part{name: "bass", channel: next(), program: bassProg,
		notes: composeBass(r, k, bs, st.bass, r.between(80, 100)), volume: 100, pan: 64})
	if kind != KindLeadSheet || r.chance(50) {
		d := composeDrums(r, bs, st.groove, st.sixteenths)
		s.parts = append(s.parts, part{name: "drums", channel: 9, drum: true, notes: d, volume: 100, pan: 64})
	}
	if kind == KindSwing && st.den == 4 {
		for pi := range s.parts {
			if s.parts[pi].name != "bass" {
				swing(s.parts[pi].notes)
			}
		}
	}
	return s
}

func dedupTempos(ts []tempoAt) []tempoAt {
	slices.SortStableFunc(ts, func(a, b tempoAt) int { return cmpInt(a.tick, b.tick) })
	out := ts[:0]
	for _, t := range ts {
		if len(out) > 0 && out[len(out)-1].tick == t.tick {
			out[len(out)-1] = t
			continue
		}
		if len(out) > 0 && out[len(out)-1].us == t.us {
			continue // no change
		}
		out = append(out, t)
	}
	return out
}

// composePatternBank writes independent drum-and-bass patterns, one per track of a
// format-2 file, each with its own meter, tempo and key.
func composePatternBank(r *rng) []*score {
	n := r.between(3, 6)
	out := make([]*score, 0, n)
	for i := 0; i < n; i++ {
		m := pick(r, [][2]int{{4, 4}, {4, 4}, {7, 8}, {5, 4}, {6, 8}, {3, 4}, {12, 8}})
		k := randomKey(r, 50)
		nb := pick(r, []int{2, 4})
		roots := make([]int, nb)
		prog := pick(r, progsFor(k))
		for j := range roots {
			roots[j] = prog[j%len(prog)]
		}
		secs := []sectionSpec{{letter: 'A', num: m[0], den: m[1], roots: roots, phrase: nb}}
		bs := layoutBars(secs)
		groove := grooveBackbeat
		if m[1] == 8 || m[0]%2 == 1 {
			groove = grooveGroups
		}
		bassStyle := bassEighths
		if groove == grooveGroups {
			bassStyle = bassGroups
		}
		s := &score{ppq: quarter, key: k, meters: meterChanges(bs), end: bs[len(bs)-1].end(),
			tempos: []tempoAt{{tick: 0, us: usOfBPM(r.between(84, 168))}}}
		s.title = "pattern " + twoDigits(i+1) + ": " + meterName(m[0], m[1]) + " groove"
		s.parts = []part{
			{name: "drums", channel: 9, drum: true, notes: composeDrums(r, bs, groove, r.chance(40)), volume: 100, pan: 64},
			{name: "bass", channel: 1, program: pick(r, []uint8{33, 34, 38}), notes: composeBass(r, k, bs, bassStyle, 95), volume: 100, pan: 64},
		}
		out = append(out, s)
	}
	return out
}

func twoDigits(n int) string { return string([]byte{byte('0' + n/10%10), byte('0' + n%10)}) }

func meterName(num, den int) string { return strconv.Itoa(num) + "/" + strconv.Itoa(den) }

// transpose shifts every pitched note by semitones and moves the key with it.
func (s *score) transpose(semitones int) {
	for pi := range s.parts {
		if s.parts[pi].drum {
			continue
		}
		for i := range s.parts[pi].notes {
			s.parts[pi].notes[i].pitch = clampKey(int(s.parts[pi].notes[i].pitch) + semitones)
		}
	}
	s.key.tonic = mod(s.key.tonic+semitones, 12)
}

// pitchRange returns the lowest and highest pitched (non-drum) notes.
func (s *score) pitchRange() (lo, hi int) {
	lo, hi = 127, 0
	for _, p := range s.parts {
		if p.drum {
			continue
		}
		for _, n := range p.notes {
			lo, hi = min(lo, int(n.pitch)), max(hi, int(n.pitch))
		}
	}
	return lo, hi
}
