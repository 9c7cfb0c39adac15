// Package bench measures relshard's speed and memory as ratios against baselines
// measured in the same run, because the machines it runs on are noisy: reading the
// bytes of the corpus and parsing it with gomidi's smf.ReadFrom are the floors the
// full export is held against; the naive pair loop is the floor of the coverage
// counter; a 2,000-file export is the floor of a 20,000-file one's peak memory.
//
// Run returns a Report with one Measure per target, each with PASS or FAIL, and the
// throughput figures for the record.
package bench
