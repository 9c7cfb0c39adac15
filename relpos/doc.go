// Package relpos measures how relative-position buckets cover the offsets that
// attention sees in training windows.
//
// Within a window, attention pairs a query token i with a key token j: causal pairs
// (j ≤ i, the default) or all pairs (bidirectional). Offsets are key minus query, as in
// Shaw et al. 2018 (j − i) and Raffel et al. 2020 (memory − query), so causal offsets
// are ≤ 0. Three offset kinds are measured: token distance j − i, time Δt = t_j − t_i
// in the stream's unit, and pitch Δp = p_j − p_i over pairs where both tokens have a
// pitch (other pairs are counted as "no pitch").
//
// A Scheme maps an offset to a bucket id: linear with clipping (Shaw et al. 2018),
// logarithmic (Raffel et al. 2020) or explicit edges. Its Table, written as JSON, lets
// training code apply exactly the same mapping. A Counter counts, exactly and in about
// O(L·B) per window of L tokens and B bucket edges, how many pairs fall into each
// bucket; CountNaive is the O(L²) reference. Report turns a Tally into coverage figures:
//
//	s, _ := relpos.Linear(1, 7) // clip(trunc(Δ/1), −7, 7): 15 buckets
//	s.Bucket(-3)                // 4 (= −3 + 7)
//	s.Bucket(-20)               // 0, saturated at the low edge
//
// The memory planner (PlanMemory) prints what the relative term of attention costs
// per layer when materialized (Shaw et al. 2018), skewed (Huang et al. 2018) or
// gathered from buckets.
package relpos
