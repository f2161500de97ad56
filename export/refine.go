package export

import (
	"cmp"
	"slices"
)

// RefineRule says in words how RefineQuery forms labels; the manifest carries it.
const RefineRule = "Within each query, the documents of one final grade that were all compared " +
	"(each took part in at least one answer other than neither relevant) and number at least two " +
	"get distinct integer labels in the order of their fitted Bradley-Terry log-strength, worst " +
	"lowest (equal strengths share a label). Label = grade + the extra labels that refined lower " +
	"grades of the query took + the place within the grade (0 for the weakest), so every document " +
	"of a higher grade keeps a higher label than every document of a lower one, and a query " +
	"without a refined grade keeps its grades as labels."

// LabelRefinement records in the manifest that an SVMlight export's labels were refined
// within grades by the preference judgments' Bradley-Terry order.
type LabelRefinement struct {
	By        string `json:"by"`        // "bradley-terry"
	Threshold int    `json:"threshold"` // the preference project's threshold of final grade
	Queries   int    `json:"queries"`   // queries with at least one refined grade
	Grades    int    `json:"grades"`    // (query, grade) groups refined
	Documents int    `json:"documents"` // documents in refined groups
	// Skipped counts (query, grade) groups of at least two documents, some compared, left
	// unrefined because another of their documents was not compared.
	Skipped  int    `json:"skipped"`
	MaxLabel int    `json:"max_label"` // the largest label written
	Rule     string `json:"rule"`
}

// RefinedQuery is one query's outcome of RefineQuery.
type RefinedQuery struct {
	Labels    map[string]int // every document of grades, by id
	Grades    int            // grades refined
	Documents int            // documents in refined grades
	Skipped   int
}

// strengthsEqual is how close two fitted log-strengths must be to share a label: the fit
// stops well short of this, and symmetric answers give strengths that differ only by rounding.
const strengthsEqual = 1e-9

// RefineQuery forms one query's labels by RefineRule: grades is every exported document's
// final grade, strengths the fitted log-strength of each compared document.
func RefineQuery(grades map[string]int, strengths map[string]float64) RefinedQuery {
	byGrade := map[int][]string{}
	for d, g := range grades {
		byGrade[g] = append(byGrade[g], d)
	}
	levels := slices.Sorted(func(yield func(int) bool) {
		for g := range byGrade {
			if !yield(g) {
				return
			}
		}
	})
	out := RefinedQuery{Labels: make(map[string]int, len(grades))}
	extra := 0
	for _, g := range levels {
		docs := byGrade[g]
		compared := 0
		for _, d := range docs {
			if _, ok := strengths[d]; ok {
				compared++
			}
		}
		if len(docs) < 2 || compared < len(docs) {
			if len(docs) >= 2 && compared > 0 {
				out.Skipped++
			}
			for _, d := range docs {
				out.Labels[d] = g + extra
			}
			continue
		}
		slices.SortFunc(docs, func(a, b string) int { return cmp.Or(cmp.Compare(strengths[a], strengths[b]), cmp.Compare(a, b)) })
		place := 0
		for i, d := range docs {
			if i > 0 && strengths[d]-strengths[docs[i-1]] > strengthsEqual {
				place++
			}
			out.Labels[d] = g + extra + place
		}
		if place > 0 {
			out.Grades++
			out.Documents += len(docs)
		}
		extra += place
	}
	return out
}
