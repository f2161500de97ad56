// Package estimate spends judgments where they count. It chooses which pairs
// to judge under a judging design (depth pooling, a stratified sample with
// known inclusion probabilities, the pairs that decide whether run A beats
// run B, or the runs most likely to yield relevant documents next), and it
// reads estimated scores with intervals back from whatever has been judged:
// infNDCG- and infAP-style Horvitz–Thompson estimates, bias-corrected, with
// standard errors and intervals from a bootstrap of the Poisson sample
// (Estimate), judged@k, the rank-biased precision residual, differences between runs with the
// probability that one beats the other, when to stop, and how many queries
// a comparison needs.
//
// It is pure computation over plain values (no I/O, no SQL), so the page,
// the command line and the API show the same numbers. It sits beside
// rankeval, whose metric conventions it shares: with every pair judged the
// estimates equal rankeval's NDCG and AP exactly, with no error. Sampled
// pairs are drawn by permanent random numbers per pair (MakePlan), so the
// designs of one project coordinate and a pair's inclusion probability is
// the highest rate any design gave it.
package estimate
