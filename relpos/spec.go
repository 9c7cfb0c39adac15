package relpos

import (
	"errors"
	"fmt"
	"strconv"
	"strings"

	"go.yaml.in/yaml/v3"
)

// SchemeSpec configures one bucketing scheme. In YAML it is either a mapping with these
// keys or the same spec as a flag takes, a string such as "linear:width=1,clip=64",
// "log:buckets=32,max=128" or "edges:-64,-16,-4,-1,0,1".
type SchemeSpec struct {
	Scheme    string  `yaml:"scheme" json:"scheme"`                       // linear, log or edges
	Width     int     `yaml:"width,omitempty" json:"width,omitempty"`     // linear: bucket width, default 1
	Clip      *int    `yaml:"clip,omitempty" json:"clip,omitempty"`       // linear: k, required
	Buckets   int     `yaml:"buckets,omitempty" json:"buckets,omitempty"` // log: number of buckets
	Max       int     `yaml:"max,omitempty" json:"max,omitempty"`         // log: saturating magnitude
	Exact     int     `yaml:"exact,omitempty" json:"exact,omitempty"`     // log: exact magnitudes, default half a side
	Direction Mode    `yaml:"direction,omitempty" json:"direction,omitempty"`
	Edges     []int64 `yaml:"edges,omitempty" json:"edges,omitempty"` // edges: bucket boundaries
}

// maxSpecLen bounds a spec string before it is split.
const maxSpecLen = 1 << 20

// ParseScheme parses a scheme spec: TYPE:KEY=VALUE,... for linear (width, clip) and log
// (buckets, max, exact, direction), and edges:E0,E1,... for explicit edges.
func ParseScheme(s string) (SchemeSpec, error) {
	if len(s) > maxSpecLen {
		return SchemeSpec{}, fmt.Errorf("parse scheme: spec of %d bytes, at most %d", len(s), maxSpecLen)
	}
	typ, rest, ok := strings.Cut(strings.TrimSpace(s), ":")
	typ = strings.TrimSpace(typ)
	if !ok {
		return SchemeSpec{}, fmt.Errorf("parse scheme %q: want TYPE:PARAMS, e.g. linear:width=1,clip=64", s)
	}
	spec := SchemeSpec{Scheme: typ}
	switch typ {
	case TypeEdges:
		edges, err := ParseEdges(rest)
		if err != nil {
			return SchemeSpec{}, fmt.Errorf("parse scheme %q: %w", s, err)
		}
		spec.Edges = edges
		return spec, nil
	case TypeLinear, TypeLog:
	default:
		return SchemeSpec{}, fmt.Errorf("parse scheme %q: type %q is not linear, log or edges", s, typ)
	}
	seen := map[string]bool{}
	for _, kv := range strings.Split(rest, ",") {
		k, v, ok := strings.Cut(kv, "=")
		k, v = strings.TrimSpace(k), strings.TrimSpace(v)
		if !ok || k == "" {
			return SchemeSpec{}, fmt.Errorf("parse scheme %q: %q is not KEY=VALUE", s, kv)
		}
		if seen[k] {
			return SchemeSpec{}, fmt.Errorf("parse scheme %q: key %q given twice", s, k)
		}
		seen[k] = true
		if k == "direction" && typ == TypeLog {
			spec.Direction = Mode(v)
			if !spec.Direction.valid() {
				return SchemeSpec{}, fmt.Errorf("parse scheme %q: direction %q is neither causal nor bidirectional", s, v)
			}
			continue
		}
		n, err := strconv.Atoi(v)
		if err != nil {
			return SchemeSpec{}, fmt.Errorf("parse scheme %q: %s=%q is not an integer", s, k, v)
		}
		switch {
		case typ == TypeLinear && k == "width":
			spec.Width = n
		case typ == TypeLinear && k == "clip":
			spec.Clip = &n
		case typ == TypeLog && k == "buckets":
			spec.Buckets = n
		case typ == TypeLog && k == "max":
			spec.Max = n
		case typ == TypeLog && k == "exact":
			spec.Exact = n
		default:
			return SchemeSpec{}, fmt.Errorf("parse scheme %q: unknown key %q for %s", s, k, typ)
		}
	}
	if typ == TypeLinear && spec.Clip == nil {
		return SchemeSpec{}, fmt.Errorf("parse scheme %q: linear needs clip=K", s)
	}
	if typ == TypeLog && (spec.Buckets == 0 || spec.Max == 0) {
		return SchemeSpec{}, fmt.Errorf("parse scheme %q: log needs buckets=N and max=M", s)
	}
	return spec, nil
}

// String returns the spec in the form ParseScheme reads.
func (s SchemeSpec) String() string {
	var parts []string
	switch s.Scheme {
	case TypeLinear:
		if s.Width != 0 {
			parts = append(parts, "width="+strconv.Itoa(s.Width))
		}
		if s.Clip != nil {
			parts = append(parts, "clip="+strconv.Itoa(*s.Clip))
		}
	case TypeLog:
		parts = append(parts, "buckets="+strconv.Itoa(s.Buckets), "max="+strconv.Itoa(s.Max))
		if s.Exact != 0 {
			parts = append(parts, "exact="+strconv.Itoa(s.Exact))
		}
		if s.Direction != "" {
			parts = append(parts, "direction="+string(s.Direction))
		}
	case TypeEdges:
		for _, e := range s.Edges {
			parts = append(parts, strconv.FormatInt(e, 10))
		}
	}
	return s.Scheme + ":" + strings.Join(parts, ",")
}

// Build returns the scheme; a log scheme without a direction takes dir (a Config
// gives the pairs mode for distance and time, bidirectional for pitch).
func (s SchemeSpec) Build(dir Mode) (*Scheme, error) {
	switch s.Scheme {
	case TypeLinear:
		if s.Clip == nil {
			return nil, errors.New("linear scheme: clip missing")
		}
		w := s.Width
		if w == 0 {
			w = 1
		}
		return Linear(w, *s.Clip)
	case TypeLog:
		d := s.Direction
		if d == "" {
			d = dir
		}
		return Log(s.Buckets, s.Max, s.Exact, d)
	case TypeEdges:
		return EdgesScheme(s.Edges)
	}
	return nil, fmt.Errorf("scheme type %q is not linear, log or edges", s.Scheme)
}

// UnmarshalYAML accepts a spec string or a mapping.
func (s *SchemeSpec) UnmarshalYAML(n *yaml.Node) error {
	if n.Kind == yaml.ScalarNode {
		spec, err := ParseScheme(n.Value)
		if err != nil {
			return fmt.Errorf("line %d: %w", n.Line, err)
		}
		*s = spec
		return nil
	}
	if n.Kind != yaml.MappingNode {
		return fmt.Errorf("line %d: a scheme is a spec string or a mapping", n.Line)
	}
	known := map[string]bool{"scheme": true, "width": true, "clip": true, "buckets": true, "max": true,
		"exact": true, "direction": true, "edges": true}
	for i := 0; i+1 < len(n.Content); i += 2 {
		if k := n.Content[i].Value; !known[k] {
			return fmt.Errorf("line %d: unknown scheme key %q", n.Content[i].Line, k)
		}
	}
	type plain SchemeSpec
	var p plain
	if err := n.Decode(&p); err != nil {
		return err
	}
	*s = SchemeSpec(p)
	return nil
}
