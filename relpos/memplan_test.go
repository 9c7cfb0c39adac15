package relpos

import (
	"fmt"
	"testing"
)

// TestPlanMemoryHuang: Huang et al. 2018 (Music Transformer, section 3.4) state that for
// L = 2048, D = 512 and 8 heads the relative term takes 8.5 GB per layer when
// materialized (1.1 GB per head) and 4.2 MB with skewing (0.52 MB per head); in
// float32 these are exactly L²·D·4 and L·D·4 bytes.
func TestPlanMemoryHuang(t *testing.T) {
	p, err := PlanMemory(MemSpec{Len: 2048, Dim: 512, Heads: 8, Batch: 1, DType: F32, Buckets: 32})
	if err != nil {
		t.Fatal(err)
	}
	got := map[string][2]int64{}
	for _, m := range p.Methods {
		got[m.Name] = [2]int64{m.PerLayer, m.PerHead}
	}
	if g, w := got["materialized"], [2]int64{8_589_934_592, 1_073_741_824}; g != w {
		t.Errorf("materialized = %v, want %v", g, w)
	}
	if g, w := got["skewing"], [2]int64{4_194_304, 524_288}; g != w {
		t.Errorf("skewing = %v, want %v", g, w)
	}
	// bucketed: 8 heads × 2048×32×4 B logits + 2048×2048×4 B index.
	if g, w := got["bucketed"], [2]int64{8*2048*32*4 + 2048*2048*4, 2048 * 32 * 4}; g != w {
		t.Errorf("bucketed = %v, want %v", g, w)
	}
}

func TestPlanMemoryBatchAndDType(t *testing.T) {
	p, err := PlanMemory(MemSpec{Len: 1024, Dim: 256, Heads: 4, Batch: 8, DType: BF16, Buckets: 64})
	if err != nil {
		t.Fatal(err)
	}
	if got, want := p.Methods[0].PerLayer, int64(1024*1024*256*2); got != want {
		t.Errorf("materialized bf16 = %d, want %d", got, want)
	}
	if got, want := p.Methods[2].PerLayer, int64(8*4*1024*64*2+1024*1024*4); got != want {
		t.Errorf("bucketed batch 8 = %d, want %d", got, want)
	}
	if got, want := p.Logits.PerLayer, int64(8*4*1024*1024*2); got != want {
		t.Errorf("logits = %d, want %d", got, want)
	}
}

func TestPlanMemoryErrors(t *testing.T) {
	for _, s := range []MemSpec{
		{Len: 0, Dim: 512, Heads: 8, Batch: 1, DType: F32, Buckets: 1},
		{Len: 2048, Dim: 510, Heads: 8, Batch: 1, DType: F32, Buckets: 1},
		{Len: 2048, Dim: 512, Heads: 8, Batch: 1, DType: "f64", Buckets: 1},
		{Len: 1 << 30, Dim: 1 << 30, Heads: 1, Batch: 1, DType: F32, Buckets: 1},
	} {
		if _, err := PlanMemory(s); err == nil {
			t.Errorf("%+v: no error", s)
		}
	}
}

func ExamplePlanMemory() {
	p, _ := PlanMemory(MemSpec{Len: 2048, Dim: 512, Heads: 8, Batch: 1, DType: F32, Buckets: 32})
	for _, m := range p.Methods {
		fmt.Printf("%-12s %14d B per layer %13d B per head\n", m.Name, m.PerLayer, m.PerHead)
	}
	// Output:
	// materialized     8589934592 B per layer    1073741824 B per head
	// skewing             4194304 B per layer        524288 B per head
	// bucketed           18874368 B per layer        262144 B per head
}
