// Package relpos measures how relative-position buckets cover the offsets that
// attention sees in training windows.
//
// Within a window, attention pairs a query token i with a key token j: causal pairs
// (j ≤ i, the default) or all pairs (bidirectional). Offsets are key minus query, as in
// Shaw et al. 2018 (j − i) and Raffel et al. 2020 (memory − query), so causal offsets
// are ≤ 0. Three offset kinds are measured: token distance j − i, time Δt = t_j − t_i
// in the stream's unit (ms, or grid steps), and pitch Δp = p_j − p_i over pairs where
// both tokens have a pitch (the other pairs are counted as "no pitch").
//
// A Scheme maps an offset to a bucket id: Linear with clipping (Shaw et al. 2018), Log
// (Raffel et al. 2020) or EdgesScheme. Its Table, written as JSON, lets training code
// apply exactly the same mapping:
//
//	s, _ := relpos.Linear(1, 7) // clip(trunc(Δ/1), −7, 7) + 7: 15 buckets
//	s.Bucket(-3)                // 4
//	s.Bucket(-20)               // 0, and s.Saturation(-20) == SatLow
//
// A Counter counts the pairs of each window into a Tally, exactly and in about O(L·C)
// per window of L tokens and C bucket edges: token distance in closed form (within an
// instrument class, from a bitset of the class's positions), time with one walk over
// the close pairs and one moving pointer per farther edge over the non-decreasing
// times, pitch with a running pitch histogram. CountNaive is the O(L²) reference it is tested against; Sample
// draws a random share of the pairs instead. Report turns a tally into coverage:
// pairs inside each scheme's range and saturated at each edge, per-bucket counts and
// shares, unused buckets, entropy, |Δ| quantiles and clip recommendations, broken down
// by instrument class and dataset. CountCorpus does it for a whole corpus, with the
// windows export writes; SweepConfig and SweepRows evaluate a grid of settings in the
// same single pass.
//
// PlanMemory gives the memory of the relative term of attention per layer when
// materialized (Shaw et al. 2018), skewed (Huang et al. 2018) or gathered from buckets.
package relpos
