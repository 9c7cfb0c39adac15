package relpos

import "math"

// wilson returns the Wilson score interval (Wilson 1927) of the share x/n at the
// two-sided confidence level conf.
func wilson(x, n int64, conf float64) Interval {
	if n <= 0 {
		return Interval{0, 1}
	}
	z := normalQuantile(0.5 + conf/2)
	p := float64(x) / float64(n)
	nf := float64(n)
	z2 := z * z
	den := 1 + z2/nf
	center := (p + z2/(2*nf)) / den
	half := z / den * math.Sqrt(p*(1-p)/nf+z2/(4*nf*nf))
	return Interval{Low: max(0, center-half), High: min(1, center+half)}
}

// normalQuantile returns the standard normal quantile of p in (0, 1), by bisection on
// the normal distribution function (enough for confidence levels; exact to 1e-12).
func normalQuantile(p float64) float64 {
	lo, hi := -40.0, 40.0
	for range 200 {
		m := (lo + hi) / 2
		if 0.5*math.Erfc(-m/math.Sqrt2) < p {
			lo = m
		} else {
			hi = m
		}
	}
	return (lo + hi) / 2
}
