package sampledata

// Music theory used by the composers: keys, scales, chords and progressions, in
// scale-degree arithmetic. Facts of the trade (major and natural/harmonic minor
// scales, diatonic triads, circle-of-fifths key signatures) are common practice.

// key is a tonic pitch class (0 = C) and a mode.
type key struct {
	tonic int // 0..11
	minor bool
}

var (
	majorSteps = [7]int{0, 2, 4, 5, 7, 9, 11} // common practice
	minorSteps = [7]int{0, 2, 3, 5, 7, 8, 10} // natural minor, common practice
)

// majorSharps is the key signature (sharps > 0, flats < 0) of each major tonic pitch
// class on the circle of fifths (common practice; F# rather than Gb).
var majorSharps = [12]int8{0, -5, 2, -3, 4, -1, 6, 1, -4, 3, -2, 5}

// sharps returns the key signature of k as written in a Key Signature meta event.
func (k key) sharps() int8 {
	if k.minor {
		return majorSharps[(k.tonic+3)%12] // relative major
	}
	return majorSharps[k.tonic]
}

var noteNamesSharp = [12]string{"c", "c-sharp", "d", "d-sharp", "e", "f", "f-sharp", "g", "g-sharp", "a", "a-sharp", "b"}
var noteNamesFlat = [12]string{"c", "d-flat", "d", "e-flat", "e", "f", "g-flat", "g", "a-flat", "a", "b-flat", "b"}

// name spells the key for titles, e.g. "e-flat minor".
func (k key) name() string {
	n := noteNamesSharp[k.tonic]
	if k.sharps() < 0 {
		n = noteNamesFlat[k.tonic]
	}
	if k.minor {
		return n + " minor"
	}
	return n + " major"
}

func floorDiv(a, b int) int {
	q := a / b
	if a%b != 0 && (a < 0) != (b < 0) {
		q--
	}
	return q
}

func mod(a, b int) int { return a - floorDiv(a, b)*b }

// pitch returns the MIDI key of scale degree deg (0 = the tonic at MIDI key base,
// 7 = an octave above, negative below). Over a dominant (chord root 4) or
// leading-tone (6) chord in minor the seventh degree is raised, as in harmonic minor
// (common practice).
func (k key) pitch(base, deg, chordRoot int) int {
	steps := majorSteps
	if k.minor {
		steps = minorSteps
	}
	d := mod(deg, 7)
	p := base + steps[d] + 12*floorDiv(deg, 7)
	if k.minor && d == 6 && (mod(chordRoot, 7) == 4 || mod(chordRoot, 7) == 6) {
		p++
	}
	return p
}

// tonicBase returns the MIDI key of the tonic nearest above or at lo.
func (k key) tonicBase(lo int) int {
	p := lo - mod(lo, 12) + k.tonic
	if p < lo {
		p += 12
	}
	return p
}

// chord is a diatonic chord by its root degree.
type chord struct {
	root    int  // 0..6
	seventh bool // add the diatonic seventh
}

// tones returns the chord's degrees relative to the tonic: root, third, fifth (and seventh).
func (c chord) tones() []int {
	if c.seventh {
		return []int{c.root, c.root + 2, c.root + 4, c.root + 6}
	}
	return []int{c.root, c.root + 2, c.root + 4}
}

// isTone reports whether degree deg belongs to the chord (any octave).
func (c chord) isTone(deg int) bool {
	for _, t := range c.tones() {
		if mod(deg-t, 7) == 0 {
			return true
		}
	}
	return false
}

// Progressions as root degrees, four bars each (common-practice and popular-music
// staples: I–V–vi–IV, I–vi–IV–V, ii–V–I and so on).
var (
	majorProgressions = [][]int{
		{0, 4, 5, 3}, {0, 5, 3, 4}, {0, 3, 4, 0}, {1, 4, 0, 0},
		{0, 3, 1, 4}, {5, 3, 0, 4}, {0, 2, 3, 4}, {0, 3, 0, 4},
	}
	minorProgressions = [][]int{
		{0, 5, 2, 6}, {0, 3, 4, 0}, {0, 6, 5, 4}, {0, 3, 6, 2}, {0, 1, 4, 0}, {0, 5, 3, 4},
	}
	swingProgressions = [][]int{
		{1, 4, 0, 0}, {0, 5, 1, 4}, {2, 5, 1, 4}, {0, 3, 1, 4},
	}
)

// cadence rewrites the end of a phrase's progression: an authentic cadence (V–I)
// or, when half is set, a half cadence ending on V (common practice).
func cadence(roots []int, half bool) {
	n := len(roots)
	if n < 2 {
		return
	}
	if half {
		roots[n-1] = 4
		return
	}
	roots[n-2], roots[n-1] = 4, 0
}
