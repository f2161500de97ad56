package export

import (
	"encoding/json"
	"io"
	"strconv"
	"time"
)

// ManifestVersion is the version of the manifest layout and of the files
// it describes; raise it when either changes incompatibly.
const ManifestVersion = 1

// ManifestFile is one file of an export.
type ManifestFile struct {
	Name   string `json:"name"`
	Format string `json:"format"` // "svmlight", "qid-map", "qrels", "group", "csv", "jsonl"
	Rows   int    `json:"rows"`   // data lines (for a group file: queries)
}

// SplitSpec records how queries were split.
type SplitSpec struct {
	Method string  `json:"method"` // "ratio", "k-fold" or "none"
	Ratios *Ratios `json:"ratios,omitempty"`
	Folds  int     `json:"folds,omitempty"`
	Seed   uint64  `json:"seed"`
}

// SplitCount is the size of one part of a split.
type SplitCount struct {
	Queries int `json:"queries"`
	Rows    int `json:"rows"`
}

// Manifest describes an export; it is written as JSON beside the files.
type Manifest struct {
	FormatVersion     int                   `json:"format_version"`
	CreatedAt         time.Time             `json:"created_at"`
	Project           string                `json:"project,omitempty"`
	LabelPolicy       LabelPolicy           `json:"label_policy"`
	PolicyDescription string                `json:"label_policy_description"`
	Agreement         map[string]float64    `json:"agreement,omitempty"` // the project's agreement figures, e.g. "krippendorff_alpha_ordinal"
	Split             *SplitSpec            `json:"split,omitempty"`
	Rows              int                   `json:"rows"`
	Queries           int                   `json:"queries"`
	Grades            map[string]int        `json:"grades"` // rows per final grade; keys are grades in decimal
	Splits            map[string]SplitCount `json:"splits,omitempty"`
	Excluded          map[string]int        `json:"excluded,omitempty"` // pairs left out, per reason
	// FromSources counts the final grades that came from an external source rather than
	// from people (the policy's FillFrom), per source: never silently.
	FromSources map[string]int `json:"from_sources,omitempty"`
	// Refinement is set when the SVMlight labels were refined by preference judgments.
	Refinement *LabelRefinement `json:"label_refinement,omitempty"`
	Files      []ManifestFile   `json:"files"`
}

// NewManifest starts a manifest for a policy, stamped with the time given.
func NewManifest(p LabelPolicy, created time.Time) Manifest {
	return Manifest{
		FormatVersion:     ManifestVersion,
		CreatedAt:         created.UTC(),
		LabelPolicy:       p,
		PolicyDescription: p.Describe(),
		Grades:            map[string]int{},
	}
}

// Write writes the manifest as indented JSON.
func (m Manifest) Write(w io.Writer) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false)
	return enc.Encode(m)
}

// Tally counts rows per grade, per split and per query as they stream by;
// pass it to WriteAll beside the file writers, then Fill a manifest.
type Tally struct {
	rows    int
	grades  map[int]int
	queries map[string]struct{}
	splits  map[string]*splitTally
}

type splitTally struct {
	rows    int
	queries map[string]struct{}
}

// NewTally returns an empty tally.
func NewTally() *Tally {
	return &Tally{grades: map[int]int{}, queries: map[string]struct{}{}, splits: map[string]*splitTally{}}
}

// Write counts one row.
func (t *Tally) Write(r Row) error {
	t.rows++
	t.grades[r.Grade]++
	t.queries[r.QueryID] = struct{}{}
	if r.Split != "" {
		s := t.splits[r.Split]
		if s == nil {
			s = &splitTally{queries: map[string]struct{}{}}
			t.splits[r.Split] = s
		}
		s.rows++
		s.queries[r.QueryID] = struct{}{}
	}
	return nil
}

// Close does nothing; it makes Tally a RowWriter.
func (t *Tally) Close() error { return nil }

// Fill copies the counts into m.
func (t *Tally) Fill(m *Manifest) {
	m.Rows = t.rows
	m.Queries = len(t.queries)
	m.Grades = make(map[string]int, len(t.grades))
	for g, n := range t.grades {
		m.Grades[strconv.Itoa(g)] = n
	}
	m.Splits = nil
	if len(t.splits) > 0 {
		m.Splits = make(map[string]SplitCount, len(t.splits))
		for name, s := range t.splits {
			m.Splits[name] = SplitCount{Queries: len(s.queries), Rows: s.rows}
		}
	}
}
