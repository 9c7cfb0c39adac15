package relpos

import (
	"errors"
	"fmt"
	"math/bits"
)

// DType is the element type of the planned tensors.
type DType string

// Element types.
const (
	F32  DType = "f32"
	BF16 DType = "bf16"
)

// Size returns the bytes per element, or 0 for an unknown type.
func (d DType) Size() int64 {
	switch d {
	case F32:
		return 4
	case BF16:
		return 2
	}
	return 0
}

// indexBytes is the size of one bucket index of the gather (int32).
const indexBytes = 4

// MemSpec describes one attention layer: sequence length, model dimension (all heads),
// heads, batch size, element type and, for the bucketed gather, the bucket count.
type MemSpec struct {
	Len     int   `json:"len"`
	Dim     int   `json:"dim"`
	Heads   int   `json:"heads"`
	Batch   int   `json:"batch"`
	DType   DType `json:"dtype"`
	Buckets int   `json:"buckets"`
}

// MemTerm is the memory of one tensor of the relative term.
type MemTerm struct {
	Tensor   string `json:"tensor"`    // what it holds, with its shape
	PerHead  int64  `json:"per_head"`  // bytes for one head (0 when shared by all heads)
	PerLayer int64  `json:"per_layer"` // bytes for one layer, all heads and the whole batch
	Batched  bool   `json:"batched"`   // grows with the batch size
}

// MemMethod is one way of computing the relative term of attention.
type MemMethod struct {
	Name     string    `json:"name"`
	Source   string    `json:"source"`
	Terms    []MemTerm `json:"terms"`
	PerHead  int64     `json:"per_head"`  // sum of the terms' per-head bytes
	PerLayer int64     `json:"per_layer"` // sum of the terms' per-layer bytes
}

// MemPlan is the memory of the relative term per layer for each method, and the
// relative logits that every method ends with.
type MemPlan struct {
	Spec    MemSpec     `json:"spec"`
	Methods []MemMethod `json:"methods"`
	Logits  MemTerm     `json:"logits"` // the L×L relative logits per head and batch element, common to all methods
}

var errOverflow = errors.New("memory plan: size overflows 64 bits")

// mul multiplies non-negative factors, failing on overflow.
func mul(f ...int64) (int64, error) {
	p := uint64(1)
	for _, x := range f {
		hi, lo := bits.Mul64(p, uint64(x))
		if hi != 0 || lo > 1<<62 {
			return 0, errOverflow
		}
		p = lo
	}
	return int64(p), nil
}

// PlanMemory returns the memory of the relative term per layer for:
//   - materialized: one D_h-vector per pair and head, an L×L×D tensor (Shaw et al. 2018);
//   - skewing: an L×D_h embedding matrix per head, L×D per layer (Huang et al. 2018);
//   - bucketed gather: L×B logits per head and batch element, and one L×L int32 bucket
//     index shared by heads and batch.
//
// With L = 2048, D = 512, 8 heads, float32 the first two are 8,589,934,592 B and
// 4,194,304 B per layer, the figures of Huang et al. 2018 (8.5 GB and 4.2 MB).
func PlanMemory(s MemSpec) (MemPlan, error) {
	switch {
	case s.Len < 1:
		return MemPlan{}, fmt.Errorf("memory plan: length %d, want ≥ 1", s.Len)
	case s.Dim < 1:
		return MemPlan{}, fmt.Errorf("memory plan: dim %d, want ≥ 1", s.Dim)
	case s.Heads < 1 || s.Dim%s.Heads != 0:
		return MemPlan{}, fmt.Errorf("memory plan: heads %d must be ≥ 1 and divide dim %d", s.Heads, s.Dim)
	case s.Batch < 1:
		return MemPlan{}, fmt.Errorf("memory plan: batch %d, want ≥ 1", s.Batch)
	case s.Buckets < 1:
		return MemPlan{}, fmt.Errorf("memory plan: buckets %d, want ≥ 1", s.Buckets)
	case s.DType.Size() == 0:
		return MemPlan{}, fmt.Errorf("memory plan: dtype %q is neither %q nor %q", s.DType, F32, BF16)
	}
	L, D, H, N, B, e := int64(s.Len), int64(s.Dim), int64(s.Heads), int64(s.Batch), int64(s.Buckets), s.DType.Size()
	dh := D / H
	var err error
	term := func(tensor string, batched bool, perHead ...int64) MemTerm {
		t := MemTerm{Tensor: tensor, Batched: batched}
		if err != nil {
			return t
		}
		var ph int64
		if ph, err = mul(perHead...); err != nil {
			return t
		}
		n := H
		if batched {
			if n, err = mul(H, N); err != nil {
				return t
			}
		}
		t.PerHead = ph
		t.PerLayer, err = mul(ph, n)
		return t
	}
	shared := func(tensor string, f ...int64) MemTerm {
		t := MemTerm{Tensor: tensor}
		if err == nil {
			t.PerLayer, err = mul(f...)
		}
		return t
	}
	methods := []MemMethod{
		{Name: "materialized", Source: "Shaw et al. 2018",
			Terms: []MemTerm{term(fmt.Sprintf("relative embeddings L×L×D_h = %d×%d×%d per head", L, L, dh), false, L, L, dh, e)}},
		{Name: "skewing", Source: "Huang et al. 2018",
			Terms: []MemTerm{term(fmt.Sprintf("relative embeddings L×D_h = %d×%d per head", L, dh), false, L, dh, e)}},
		{Name: "bucketed", Source: "bucket logits and gather",
			Terms: []MemTerm{
				term(fmt.Sprintf("bucket logits L×B = %d×%d per head and batch element", L, B), true, L, B, e),
				shared(fmt.Sprintf("bucket index L×L = %d×%d int32, shared", L, L), L, L, indexBytes),
			}},
	}
	logits := term(fmt.Sprintf("relative logits L×L = %d×%d per head and batch element", L, L), true, L, L, e)
	if err != nil {
		return MemPlan{}, err
	}
	for i := range methods {
		m := &methods[i]
		for _, t := range m.Terms {
			m.PerHead += t.PerHead
			m.PerLayer += t.PerLayer
		}
		if m.PerLayer < 0 {
			return MemPlan{}, errOverflow
		}
	}
	return MemPlan{Spec: s, Methods: methods, Logits: logits}, nil
}
