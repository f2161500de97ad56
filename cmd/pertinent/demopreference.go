package main

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"

	"github.com/pertinent/pertinent/store"
)

// The demo's second project asks which of two products is better, over the products the
// first project's expert truth grades 3 or 4, on the four queries that have most of them
// (four to seven). A lead's adjudications settle those grades (as they would after graded
// judging), and the assessors have answered the comparisons of the first queries and some of
// the last, so the Preferences page has finished sorts, fits, agreement and open work to show.

const demoPrefProjectName = "Harbourline top products compared"

// demoPrefQueries are the queries of the preference project, by index into demoQueries, and
// demoPrefDocs the most products each compares.
var demoPrefQueries = []int{0, 1, 10, 13}

const demoPrefDocs = 7

// demoPrefAnswers is how many answers the history holds: assessors are offered the open
// comparisons query by query, so this finishes the first sorts and leaves the last one open.
const demoPrefAnswers = 50

func addDemoPreferences(ctx context.Context, st *store.Store) error {
	if _, err := st.ProjectByName(ctx, demoPrefProjectName); err == nil {
		return nil
	} else if !errors.Is(err, store.ErrNotFound) {
		return err
	}
	c := buildDemoCollection()
	ids := map[string]int64{}
	for _, p := range demoPeople {
		u, err := st.UserByUsername(ctx, p.username)
		if err != nil {
			return err
		}
		ids[p.username] = u.ID
	}
	proj, err := st.CreateProject(ctx, store.NewProject{
		Name:        demoPrefProjectName,
		Description: "Of two good products for a customer's search, which is the better answer?",
		Guidelines: demoGuidelines + "\n## Comparing two products\n\nBoth products are already judged a good match. " +
			"Pick the one the customer would rather buy for what they typed; *about the same* when you cannot tell them apart.\n",
		JudgmentsPerPair: 2, AllowChanges: true,
	}, ids["harbourmaster"])
	if err != nil {
		return err
	}
	var lead int64
	var assessors []int64
	for _, p := range demoPeople {
		switch p.role {
		case store.RoleLead:
			lead = ids[p.username]
		case store.RoleAssessor:
			assessors = append(assessors, ids[p.username])
		default:
			continue
		}
		if err := st.SetMember(ctx, proj.ID, ids[p.username], p.role, ids["harbourmaster"]); err != nil {
			return err
		}
	}
	// Each product's hidden merit within its grade, which the invented assessors sense
	// through Bradley–Terry noise.
	rng := rand.New(rand.NewPCG(demoSeed+4, 17))
	merit := map[string]float64{}
	type settled struct {
		pair  int64
		grade int
	}
	var grades []settled
	err = st.Load(ctx, proj.ID, func(l *store.Loader) error {
		for _, qi := range demoPrefQueries {
			q := demoQueries[qi]
			qid, err := l.Query(store.Query{ExternalID: q.id, Text: q.text, Need: q.need})
			if err != nil {
				return err
			}
			var top []demoPair
			for _, p := range c.pairs {
				if p.query == qi && p.truth >= 3 {
					top = append(top, p)
				}
			}
			// The grade-4 products first, so every query keeps its exact matches.
			slices.SortStableFunc(top, func(a, b demoPair) int { return b.truth - a.truth })
			for _, p := range top[:min(len(top), demoPrefDocs)] {
				doc := c.items[p.item].doc
				did, err := l.Document(doc)
				if err != nil {
					return err
				}
				pid, err := l.Pair(store.PairSpec{QueryID: qid, DocumentID: did, Origin: "demo"})
				if err != nil {
					return err
				}
				grades = append(grades, settled{pid, p.truth})
				merit[doc.ExternalID] = float64(p.truth) + rng.NormFloat64()*0.8
			}
		}
		return nil
	})
	if err != nil {
		return err
	}
	for _, g := range grades {
		if _, err := st.Adjudicate(ctx, g.pair, lead, g.grade, "carried over from graded judging"); err != nil {
			return err
		}
	}
	if err := st.SetTaskKind(ctx, proj.ID, store.TaskPreference, nil, lead); err != nil {
		return err
	}
	// The graded project's two runs over these queries, so the page measures them against
	// the answers.
	asked := map[string]bool{}
	for _, qi := range demoPrefQueries {
		asked[demoQueries[qi].id] = true
	}
	runs := demoRuns(c)
	for _, name := range []string{"shop-attributes.run", "shop-keywords.run"} {
		var kept strings.Builder
		for line := range strings.Lines(runs[name]) {
			if q, _, _ := strings.Cut(line, " "); asked[q] {
				kept.WriteString(line)
			}
		}
		if _, err := st.KeepRun(ctx, proj.ID, lead, name, strings.NewReader(kept.String())); err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
	}
	answered := 0
	for idle := 0; idle < len(assessors) && answered < demoPrefAnswers; {
		idle = 0
		for _, u := range assessors {
			if answered >= demoPrefAnswers {
				break
			}
			v, err := st.NextComparison(ctx, proj.ID, u)
			if errors.Is(err, store.ErrNoWork) {
				idle++
				continue
			}
			if err != nil {
				return err
			}
			d := merit[v.Left.ExternalID] - merit[v.Right.ExternalID]
			outcome := "right"
			switch {
			case math.Abs(d) < 0.3 && rng.IntN(2) == 0:
				outcome = "same" // hard to tell apart: half the time they say so
			case rng.Float64() < 1/(1+math.Exp(-2*d)):
				outcome = "left"
			}
			if _, err := st.AnswerComparison(ctx, store.PreferenceSubmission{ComparisonID: v.ComparisonID, ProjectID: proj.ID,
				UserID: u, LeftDoc: v.Left.ID, Outcome: outcome, TimeSpentMs: 6000 + rng.IntN(20000)}); err != nil {
				return fmt.Errorf("demo preference answer: %w", err)
			}
			answered++
		}
	}
	return nil
}
