package relpos

import (
	"bufio"
	"os"
	"reflect"
	"strings"
	"testing"

	"go.yaml.in/yaml/v3"
)

func readSpecs(t testing.TB) []string {
	f, err := os.Open("testdata/schemes.txt")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var out []string
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if line := strings.TrimSpace(sc.Text()); line != "" {
			out = append(out, line)
		}
	}
	return out
}

func TestParseScheme(t *testing.T) {
	tests := []struct {
		in      string
		want    SchemeSpec
		wantErr bool
	}{
		{in: "linear:width=10,clip=32", want: SchemeSpec{Scheme: TypeLinear, Width: 10, Clip: clipPtr(32)}},
		{in: " log : buckets=32, max=128 ,direction=causal", want: SchemeSpec{Scheme: "log", Buckets: 32, Max: 128, Direction: Causal}},
		{in: "edges:-8,0,1", want: SchemeSpec{Scheme: TypeEdges, Edges: []int64{-8, 0, 1}}},
		{in: "linear:width=1", wantErr: true},
		{in: "linear:width=1,clip=2,clip=3", wantErr: true},
		{in: "log:buckets=32", wantErr: true},
		{in: "log:buckets=32,max=x", wantErr: true},
		{in: "log:buckets=32,max=128,direction=up", wantErr: true},
		{in: "edges:1,1", wantErr: true},
		{in: "edges:", wantErr: true},
		{in: "cubic:k=1", wantErr: true},
		{in: "linear", wantErr: true},
		{in: "linear:width=1,clip=2,speed=3", wantErr: true},
	}
	for _, tt := range tests {
		got, err := ParseScheme(tt.in)
		if (err != nil) != tt.wantErr {
			t.Errorf("ParseScheme(%q) error %v, wantErr %v", tt.in, err, tt.wantErr)
			continue
		}
		if !tt.wantErr && !reflect.DeepEqual(got, tt.want) {
			t.Errorf("ParseScheme(%q) = %+v, want %+v", tt.in, got, tt.want)
		}
	}
	for _, s := range readSpecs(t) {
		spec, err := ParseScheme(s)
		if err != nil {
			t.Errorf("testdata spec %q: %v", s, err)
			continue
		}
		if spec.String() != s {
			t.Errorf("String() = %q, want %q", spec.String(), s)
		}
	}
}

// The YAML form takes spec strings and mappings with the same keys, and refuses
// unknown keys.
func TestConfigYAML(t *testing.T) {
	const doc = `
pairs: bidirectional
distance: ["linear:width=1,clip=7", {scheme: log, buckets: 32, max: 128}]
time:
  - scheme: edges
    edges: [-1000, -100, 0, 1]
pitch: ["linear:width=1,clip=24"]
budget: 65
targets: [0.9]
`
	var cfg Config
	if err := yaml.Unmarshal([]byte(doc), &cfg); err != nil {
		t.Fatal(err)
	}
	want := Config{Pairs: Bidirectional,
		Distance: []SchemeSpec{{Scheme: TypeLinear, Width: 1, Clip: clipPtr(7)}, {Scheme: TypeLog, Buckets: 32, Max: 128}},
		Time:     []SchemeSpec{{Scheme: TypeEdges, Edges: []int64{-1000, -100, 0, 1}}},
		Pitch:    []SchemeSpec{{Scheme: TypeLinear, Width: 1, Clip: clipPtr(24)}},
		Budget:   65, Targets: []float64{0.9}}
	if !reflect.DeepEqual(cfg, want) {
		t.Errorf("got %+v\nwant %+v", cfg, want)
	}
	if err := cfg.Validate(); err != nil {
		t.Error(err)
	}
	for _, bad := range []string{
		`distance: [{scheme: linear, width: 1, clip: 3, colour: red}]`,
		`distance: ["linear:width=1"]`,
		`distance: [[1, 2]]`,
	} {
		var c Config
		if err := yaml.Unmarshal([]byte(bad), &c); err == nil {
			t.Errorf("%s: no error", bad)
		}
	}
	for _, bad := range []Config{
		{Pairs: "both"},
		{Targets: []float64{1.5}},
		{Sample: 2},
		{Time: []SchemeSpec{{Scheme: TypeLog, Buckets: 7, Max: 3}}},
		{Budget: -1},
	} {
		if err := bad.Validate(); err == nil {
			t.Errorf("%+v: no error", bad)
		}
	}
}

// FuzzParseScheme: parsing never panics, a parsed spec prints back to a spec that
// parses to the same value, and building it never panics.
func FuzzParseScheme(f *testing.F) {
	for _, s := range readSpecs(f) {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		spec, err := ParseScheme(s)
		if err != nil {
			return
		}
		again, err := ParseScheme(spec.String())
		if err != nil || !reflect.DeepEqual(again, spec) {
			t.Fatalf("%q -> %q -> %+v, %v", s, spec.String(), again, err)
		}
		if spec.Scheme == TypeLog && spec.Buckets > 512 {
			return // valid but slow to build; the limits are tested elsewhere
		}
		if sch, err := spec.Build(Causal); err == nil && sch.Buckets() < 1 {
			t.Fatalf("%q: %d buckets", s, sch.Buckets())
		}
	})
}

// FuzzParseEdges: parsing never panics and accepted edges are strictly increasing.
func FuzzParseEdges(f *testing.F) {
	for _, s := range readSpecs(f) {
		if rest, ok := strings.CutPrefix(s, "edges:"); ok {
			f.Add(rest)
		}
	}
	f.Add("9223372036854775807,1")
	f.Fuzz(func(t *testing.T, s string) {
		edges, err := ParseEdges(s)
		if err != nil {
			return
		}
		for i := 1; i < len(edges); i++ {
			if edges[i] <= edges[i-1] {
				t.Fatalf("%q: edges %v not increasing", s, edges)
			}
		}
		if _, err := EdgesScheme(edges); err != nil {
			t.Fatalf("%q: parsed edges rejected: %v", s, err)
		}
	})
}
