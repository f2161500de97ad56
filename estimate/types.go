package estimate

import "github.com/pertinent/pertinent/rankeval"

// Kind names a judging design.
type Kind string

// The judging designs.
const (
	// KindDepth pools every run to a fixed depth and judges all of it.
	KindDepth Kind = "depth"
	// KindStratified judges ranks 1..Depth of every run in full and samples
	// deeper ranks (to MaxDepth) with known inclusion probabilities (Yilmaz,
	// Kanoulas & Aslam, SIGIR 2008; Aslam, Pavlu & Yilmaz, SIGIR 2006).
	KindStratified Kind = "stratified"
	// KindDecide releases next the pairs whose grade can most change the
	// difference between runs A and B (minimal test collections: Carterette,
	// Allan & Sitaraman, SIGIR 2006), until the sign is settled.
	KindDecide Kind = "decide"
	// KindFind releases next the documents most likely to be relevant: runs
	// as arms of a bandit (Losada, Parapar & Barreiro, IPM 2017) or
	// move-to-front (Cormack, Palmer & Clarke, SIGIR 1998).
	KindFind Kind = "find"
)

// Find methods.
const (
	FindBandit      = "bandit"
	FindMoveToFront = "move-to-front"
)

// Design fixes how pairs are chosen. Zero fields take the defaults named.
type Design struct {
	Kind Kind `json:"kind"`
	// Depth: the pool depth (depth), or the top stratum judged in full
	// (stratified: ranks 1..Depth of every run).
	Depth int `json:"depth"`
	// MaxDepth: the deepest rank a stratified design samples.
	MaxDepth int `json:"max_depth,omitempty"`
	// Budget: judgments (pairs) to spend over all queries; PerQuery: per
	// query. Either may be 0 (no limit of that kind); a stratified design
	// needs at least one.
	Budget   int `json:"budget,omitempty"`
	PerQuery int `json:"per_query,omitempty"`
	// K is the cut-off of the decided metric (NDCG@K) for decide designs,
	// and of the reported NDCG@K everywhere.
	K int `json:"k"`
	// RunA and RunB name the two runs a decide design compares.
	RunA string `json:"run_a,omitempty"`
	RunB string `json:"run_b,omitempty"`
	// Confidence at which a decide design calls the sign settled (0.95).
	Confidence float64 `json:"confidence,omitempty"`
	// Method of a find design: FindBandit or FindMoveToFront.
	Method string `json:"method,omitempty"`
	// Wave: how many pairs an adaptive design (decide, find) releases at a
	// time, so that several assessors have work while grades come back.
	Wave int `json:"wave,omitempty"`
	// Seed keys the permanent random numbers of the sample (see MakePlan).
	// Give every design of a project the same seed: then a later design
	// takes every pair an earlier one took at a lower rate, and a pair's
	// inclusion probability over all of them is the highest rate any gave it.
	Seed uint64 `json:"seed"`
}

// NamedRun is one run, its documents per query in any order (ranked here by
// rankeval.Rank: score descending, ties by document id).
type NamedRun struct {
	Name string       `json:"name"`
	Run  rankeval.Run `json:"-"`
}

// Label is what is known of one pair for estimation.
type Label struct {
	// Grade is the final grade, or -1 when the pair was chosen but has no
	// final grade yet.
	Grade int `json:"grade"`
	// Prob is the probability that the pair was chosen for judging, over
	// every design that offered it (the highest rate any of them gave it,
	// see MakePlan); 1 for a pair judged
	// in full or known before any sampling, and for pairs chosen by
	// adaptive designs (which are not probability samples).
	Prob float64 `json:"prob"`
	// Stratum groups the pairs of one query whose missing grades are made
	// up for by the graded ones of the same stratum (judging in progress).
	Stratum int `json:"stratum"`
}

// Labels maps query id -> document id -> label.
type Labels map[string]map[string]Label

// Prior is what a pair already in the project brings to a new design.
type Prior struct {
	Prob   float64 // its combined inclusion probability so far (1: certain)
	Graded bool    // it has a final grade
}

// Choice is one pair a design chooses, with why.
type Choice struct {
	Query string `json:"query"`
	Doc   string `json:"doc"`
	// Stratum: 0 for pairs judged in full (the top stratum, depth pools),
	// 1.. for deeper sampled strata, -1 for adaptive choices.
	Stratum int `json:"stratum"`
	// Prob is the rate this design gave the pair; Combined is its inclusion
	// probability over every design so far: max(before, Prob).
	Prob     float64 `json:"prob"`
	Combined float64 `json:"combined"`
	// Priority orders judging (higher first), as pairs.priority does.
	Priority int `json:"priority"`
	// Reason says in plain words why the pair was chosen.
	Reason string `json:"reason"`
}

// Stratum describes one stratum of a stratified plan for the lead.
type Stratum struct {
	Index    int     `json:"index"`
	FromRank int     `json:"from_rank"` // best rank over the runs, inclusive
	ToRank   int     `json:"to_rank"`
	Pairs    int     `json:"pairs"`    // population: distinct pairs in the stratum, over queries
	Expected float64 `json:"expected"` // expected pairs chosen
	Rate     float64 `json:"rate"`     // inclusion probability of an unjudged pair
}

// Plan is the outcome of a design: the pairs to send to judging.
type Plan struct {
	Design  Design    `json:"design"`
	Choices []Choice  `json:"choices"`
	Strata  []Stratum `json:"strata,omitempty"`
	// Already counts candidate pairs that were in the project before
	// (known, so they cost nothing more).
	Already int `json:"already"`
	// Notes say what the design could not do as asked (e.g. the budget ran
	// out before every query got its top stratum).
	Notes []string `json:"notes,omitempty"`
}
