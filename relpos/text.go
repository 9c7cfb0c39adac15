package relpos

import (
	"fmt"
	"io"
	"strconv"
	"strings"
	"text/tabwriter"
)

// groupDigits writes n with thousands separators: 8,589,934,592.
func groupDigits(n int64) string {
	s := strconv.FormatInt(n, 10)
	neg := strings.HasPrefix(s, "-")
	s = strings.TrimPrefix(s, "-")
	var b strings.Builder
	for i, r := range s {
		if i > 0 && (len(s)-i)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteRune(r)
	}
	if neg {
		return "-" + b.String()
	}
	return b.String()
}

// humanBytes writes n in binary units: 8.00 GiB.
func humanBytes(n int64) string {
	units := []string{"B", "KiB", "MiB", "GiB", "TiB", "PiB", "EiB"}
	f, u := float64(n), 0
	for f >= 1024 && u < len(units)-1 {
		f /= 1024
		u++
	}
	if u == 0 {
		return fmt.Sprintf("%d B", n)
	}
	return fmt.Sprintf("%.2f %s", f, units[u])
}

func bound(p *int64, open string) string {
	if p == nil {
		return open
	}
	return strconv.FormatInt(*p, 10)
}

// WriteTables writes bucket tables as text: one block per table, a row per offset range.
func WriteTables(w io.Writer, tables []Table) error {
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	for i, t := range tables {
		if i > 0 {
			fmt.Fprintln(tw)
		}
		head := t.Name
		if t.Kind != "" {
			head = t.Kind + " " + head
		}
		fmt.Fprintf(tw, "%s: %d buckets, offset = key - query\n", head, t.Buckets)
		fmt.Fprintln(tw, "from\tto\tbucket\tsaturated")
		for _, r := range t.Ranges {
			sat := r.Saturated
			if sat == "" {
				sat = "-"
			}
			fmt.Fprintf(tw, "%s\t%s\t%d\t%s\n", bound(r.From, "-inf"), bound(r.To, "+inf"), r.Bucket, sat)
		}
	}
	return tw.Flush()
}

// WriteText writes the memory plan as a table.
func (p MemPlan) WriteText(w io.Writer) error {
	s := p.Spec
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintf(tw, "relative term of attention per layer: L=%d D=%d heads=%d (D_h=%d) batch=%d %s buckets=%d\n",
		s.Len, s.Dim, s.Heads, s.Dim/s.Heads, s.Batch, s.DType, s.Buckets)
	fmt.Fprintln(tw, "method\tper layer\t\tper head\tsource")
	for _, m := range p.Methods {
		fmt.Fprintf(tw, "%s\t%s B\t%s\t%s B\t%s\n", m.Name, groupDigits(m.PerLayer), humanBytes(m.PerLayer),
			groupDigits(m.PerHead), m.Source)
	}
	fmt.Fprintln(tw)
	fmt.Fprintln(tw, "tensors\tper layer\t\tper head\tbatched")
	for _, m := range p.Methods {
		for _, t := range m.Terms {
			fmt.Fprintf(tw, "%s: %s\t%s B\t%s\t%s B\t%v\n", m.Name, t.Tensor, groupDigits(t.PerLayer), humanBytes(t.PerLayer),
				groupDigits(t.PerHead), t.Batched)
		}
	}
	l := p.Logits
	fmt.Fprintf(tw, "every method: %s\t%s B\t%s\t%s B\t%v\n", l.Tensor, groupDigits(l.PerLayer), humanBytes(l.PerLayer),
		groupDigits(l.PerHead), l.Batched)
	return tw.Flush()
}
