package relpos

import "fmt"

// Kind is an offset kind.
type Kind int

// Offset kinds.
const (
	Distance Kind = iota // token distance j − i
	Time                 // Δt = t_j − t_i in the stream's time unit
	Pitch                // Δp = p_j − p_i, pairs where both tokens have a pitch
	numKinds
)

// Kinds lists the offset kinds in report order.
var Kinds = [numKinds]Kind{Distance, Time, Pitch}

func (k Kind) String() string {
	switch k {
	case Distance:
		return "distance"
	case Time:
		return "time"
	case Pitch:
		return "pitch"
	}
	return fmt.Sprintf("kind(%d)", int(k))
}

// KindWidths lists bucket widths per offset kind.
type KindWidths struct {
	Distance []int `yaml:"distance" json:"distance"`
	Time     []int `yaml:"time" json:"time"`
	Pitch    []int `yaml:"pitch" json:"pitch"`
}

func (w KindWidths) of(k Kind) []int {
	switch k {
	case Distance:
		return w.Distance
	case Time:
		return w.Time
	}
	return w.Pitch
}

// Config selects the pairs, the schemes per offset kind and what the coverage report
// contains. The zero value of a field means its default (see DefaultConfig).
type Config struct {
	// Pairs is causal (keys j ≤ i, the default) or bidirectional.
	Pairs Mode `yaml:"pairs" json:"pairs"`
	// Schemes per offset kind; every one is counted in the same pass.
	Distance []SchemeSpec `yaml:"distance" json:"distance"`
	Time     []SchemeSpec `yaml:"time" json:"time"`
	Pitch    []SchemeSpec `yaml:"pitch" json:"pitch"`
	// Instruments adds the breakdown into drum pairs (both tokens drums) and pitched
	// pairs (both tokens pitched instruments). Default on; "false" turns it off.
	Instruments *bool `yaml:"instruments" json:"instruments"`
	// Joint adds the 2-D table of the first time scheme × the first pitch scheme over
	// pairs where both tokens have a pitch. It walks every such pair: O(L²) per window.
	Joint bool `yaml:"joint" json:"joint"`
	// Targets are the coverage targets of the recommendations (default 0.95, 0.99).
	Targets []float64 `yaml:"targets" json:"targets"`
	// Budget, when > 0, lists the (width, clip) pairs whose rows fit Budget embedding rows.
	Budget int `yaml:"budget" json:"budget"`
	// BudgetWidths are the widths tried for the budget, per kind.
	BudgetWidths KindWidths `yaml:"budget_widths" json:"budget_widths"`
	// Sample, when in (0, 1), counts a random share of the pairs instead of all of them,
	// and every share gets a Wilson confidence interval at Confidence.
	Sample float64 `yaml:"sample" json:"sample"`
	// ExactUpTo is the largest |Δ| up to which the quantiles of time offsets (and of token
	// distance within an instrument class) are exact: those offsets are counted one by
	// one, at a cost of the pairs that close in time. Above it a quantile is bracketed
	// within 1/12 of its value. Default 32.
	ExactUpTo  int     `yaml:"exact_up_to" json:"exact_up_to"`
	Seed       uint64  `yaml:"seed" json:"seed"`
	Confidence float64 `yaml:"confidence" json:"confidence"`
}

func clipPtr(k int) *int { return &k }

// DefaultConfig returns the defaults: causal pairs; distance buckets linear with clip 64
// and the log buckets of Raffel et al. 2020 (32 buckets up to 128); time log buckets (32
// up to 2048 units); pitch linear with clip 24 (two octaves); instrument breakdown on;
// targets 95 % and 99 %; exact counting.
func DefaultConfig() Config {
	on := true
	return Config{
		Pairs: Causal,
		Distance: []SchemeSpec{
			{Scheme: TypeLinear, Width: 1, Clip: clipPtr(64)},
			{Scheme: TypeLog, Buckets: 32, Max: 128},
		},
		Time:        []SchemeSpec{{Scheme: TypeLog, Buckets: 32, Max: 2048}},
		Pitch:       []SchemeSpec{{Scheme: TypeLinear, Width: 1, Clip: clipPtr(24)}},
		Instruments: &on,
		Targets:     []float64{0.95, 0.99},
		BudgetWidths: KindWidths{
			Distance: []int{1, 2, 4, 8, 16},
			Time:     []int{1, 5, 10, 20, 50, 100, 200},
			Pitch:    []int{1, 2, 3, 4, 6, 12},
		},
		Confidence: 0.95,
		ExactUpTo:  DefaultExact,
	}
}

// Specs returns the scheme specs of an offset kind.
func (c Config) Specs(k Kind) []SchemeSpec {
	switch k {
	case Distance:
		return c.Distance
	case Time:
		return c.Time
	}
	return c.Pitch
}

// Resolved returns the config with every zero field set to its default.
func (c Config) Resolved() Config {
	d := DefaultConfig()
	if c.Pairs == "" {
		c.Pairs = d.Pairs
	}
	if len(c.Distance) == 0 {
		c.Distance = d.Distance
	}
	if len(c.Time) == 0 {
		c.Time = d.Time
	}
	if len(c.Pitch) == 0 {
		c.Pitch = d.Pitch
	}
	if c.Instruments == nil {
		c.Instruments = d.Instruments
	}
	if len(c.Targets) == 0 {
		c.Targets = d.Targets
	}
	if len(c.BudgetWidths.Distance) == 0 {
		c.BudgetWidths.Distance = d.BudgetWidths.Distance
	}
	if len(c.BudgetWidths.Time) == 0 {
		c.BudgetWidths.Time = d.BudgetWidths.Time
	}
	if len(c.BudgetWidths.Pitch) == 0 {
		c.BudgetWidths.Pitch = d.BudgetWidths.Pitch
	}
	if c.Confidence == 0 {
		c.Confidence = d.Confidence
	}
	if c.ExactUpTo == 0 {
		c.ExactUpTo = d.ExactUpTo
	}
	return c
}

// maxSchemesPerKind bounds the schemes of one kind (a sweep's grid included).
const maxSchemesPerKind = 1 << 14

// Validate checks the resolved config and names the first bad key.
func (c Config) Validate() error {
	c = c.Resolved()
	if !c.Pairs.valid() {
		return fmt.Errorf("relpos config: pairs %q is neither %q nor %q", c.Pairs, Causal, Bidirectional)
	}
	for _, k := range Kinds {
		specs := c.Specs(k)
		if len(specs) > maxSchemesPerKind {
			return fmt.Errorf("relpos config: %s: %d schemes, at most %d", k, len(specs), maxSchemesPerKind)
		}
		for i, s := range specs {
			if _, err := s.Build(direction(k, c.Pairs)); err != nil {
				return fmt.Errorf("relpos config: %s[%d] %s: %w", k, i, s, err)
			}
		}
		for i, w := range c.BudgetWidths.of(k) {
			if w < 1 || w > maxWidth {
				return fmt.Errorf("relpos config: budget_widths.%s[%d]: width %d outside 1..%d", k, i, w, maxWidth)
			}
		}
	}
	for i, t := range c.Targets {
		if !(t > 0 && t <= 1) {
			return fmt.Errorf("relpos config: targets[%d]: %v outside (0, 1]", i, t)
		}
	}
	if c.Budget < 0 || c.Budget > 2*maxClip+1 {
		return fmt.Errorf("relpos config: budget %d outside 0..%d", c.Budget, 2*maxClip+1)
	}
	if !(c.Sample >= 0 && c.Sample <= 1) {
		return fmt.Errorf("relpos config: sample %v outside [0, 1]", c.Sample)
	}
	if c.ExactUpTo < 1 || c.ExactUpTo > maxExact {
		return fmt.Errorf("relpos config: exact_up_to %d outside 1..%d", c.ExactUpTo, maxExact)
	}
	if !(c.Confidence > 0 && c.Confidence < 1) {
		return fmt.Errorf("relpos config: confidence %v outside (0, 1)", c.Confidence)
	}
	return nil
}

// Tables returns the bucket table of every scheme, labelled with its offset kind, in
// config order: the JSON to store with the shards.
func (c Config) Tables() ([]Table, error) {
	if err := c.Validate(); err != nil {
		return nil, err
	}
	c = c.Resolved()
	var out []Table
	for _, k := range Kinds {
		for _, spec := range c.Specs(k) {
			s, err := spec.Build(direction(k, c.Pairs))
			if err != nil {
				return nil, err // unreachable after Validate
			}
			t := s.Table()
			t.Kind = k.String()
			switch k {
			case Distance:
				t.Unit = "tokens"
			case Pitch:
				t.Unit = "semitones"
			} // time: the encoding's unit, which the caller knows (ms or grid steps)
			out = append(out, t)
		}
	}
	return out, nil
}

// direction is the default direction of a log scheme of kind k: the pairs mode for
// token distance and time (causal pairs have offsets ≤ 0), and bidirectional for
// pitch, whose offsets take both signs in either mode.
func direction(k Kind, pairs Mode) Mode {
	if k == Pitch {
		return Bidirectional
	}
	return pairs
}
