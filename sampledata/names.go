package sampledata

import "strings"

// Invented words for piece titles; every title is a combination of these and
// belongs to the invented scenario of the demo corpus.
var (
	titleAdjectives = []string{
		"amber", "slate", "copper", "lantern", "willow", "harbour", "quiet", "paper", "velvet",
		"hollow", "silver", "northern", "cinder", "marigold", "juniper", "iron", "glass", "tidal",
		"drifting", "crooked", "meadow", "ember", "foggy", "little", "winter", "autumn", "midnight",
		"early", "salt", "thistle", "lamplit", "rusted", "sleepy", "bramble",
	}
	titleNouns = []string{
		"orchard", "heron", "staircase", "ferry", "bell tower", "kite", "mill", "canal", "garden",
		"comet", "quarry", "lighthouse", "market", "tram", "sparrow", "chapel", "weathervane",
		"thimble", "bridge", "attic", "parade", "carousel", "pier", "signal box", "greenhouse",
		"rooftop", "windmill", "ferryman", "boathouse", "clocktower",
	}
	recitalForms = map[int][]string{ // by beats per bar of the piece's meter
		4: {"nocturne", "prelude", "etude", "impromptu", "romance", "elegy", "reverie", "intermezzo"},
		3: {"waltz", "mazurka", "minuet", "valse lente", "berceuse"},
		2: {"barcarolle", "siciliano", "lullaby", "pastorale"},
	}
	bandForms   = []string{"march", "serenade", "promenade", "fanfare", "two-step", "ballad", "reel", "song"}
	studioForms = []string{"sketch", "groove", "study", "vamp", "shuffle", "blues", "riff", "loop"}
)

// makeTitle invents a title such as "Copper Heron Nocturne".
func makeTitle(r *rng, form string) string {
	words := strings.Fields(pick(r, titleAdjectives) + " " + pick(r, titleNouns) + " " + form)
	for i, w := range words {
		words[i] = strings.ToUpper(w[:1]) + w[1:]
	}
	return strings.Join(words, " ")
}

// slugOf turns a title into a file-name stem: "copper-heron-nocturne".
func slugOf(title string) string {
	var b strings.Builder
	dash := false
	for _, c := range strings.ToLower(title) {
		switch {
		case c >= 'a' && c <= 'z' || c >= '0' && c <= '9':
			b.WriteRune(c)
			dash = false
		case !dash && b.Len() > 0:
			b.WriteByte('-')
			dash = true
		}
	}
	return strings.TrimSuffix(b.String(), "-")
}

// corpusText is the Text meta event written at the start of every file, saying
// where the piece comes from in the invented scenario.
func corpusText(kind string) string {
	switch datasetOf[kind] {
	case DatasetRecitals:
		return "Velmora Conservatory recital archive (invented demo data)"
	case DatasetBand:
		return "Tollemere Town Band arrangement library (invented demo data)"
	default:
		return "Kestrel Lane Studio sketchbook (invented demo data)"
	}
}
