package export

import (
	"maps"
	"testing"
)

func TestRefineQuery(t *testing.T) {
	for _, c := range []struct {
		name      string
		grades    map[string]int
		strengths map[string]float64
		want      map[string]int
		refined   int
		skipped   int
	}{
		{
			// Worked by hand: grade 3 takes labels 3, 4 (c below d), so grade 4 starts at 5.
			name:      "two grades refined, one crossing the grades",
			grades:    map[string]int{"a": 4, "b": 4, "c": 3, "d": 3, "e": 2},
			strengths: map[string]float64{"b": 2, "d": 1, "a": 0, "c": -3},
			want:      map[string]int{"e": 2, "c": 3, "d": 4, "a": 5, "b": 6},
			refined:   2,
		},
		{
			name:      "nothing compared keeps the grades",
			grades:    map[string]int{"a": 4, "b": 4, "c": 1},
			strengths: map[string]float64{},
			want:      map[string]int{"a": 4, "b": 4, "c": 1},
		},
		{
			// One of three grade-4 documents was not compared: no invented order for it.
			name:      "a grade with an uncompared document is skipped",
			grades:    map[string]int{"a": 4, "b": 4, "x": 4, "c": 3, "d": 3},
			strengths: map[string]float64{"a": 1, "b": -1, "c": 0.5, "d": 0.2},
			want:      map[string]int{"d": 3, "c": 4, "a": 5, "b": 5, "x": 5},
			refined:   1,
			skipped:   1,
		},
		{
			name:      "equal strengths share a label",
			grades:    map[string]int{"a": 3, "b": 3, "c": 3},
			strengths: map[string]float64{"a": 0.5, "b": 0.5 + 1e-12, "c": -1},
			want:      map[string]int{"c": 3, "a": 4, "b": 4},
			refined:   1,
		},
		{
			name:      "a lone document of its grade is left alone",
			grades:    map[string]int{"a": 4, "c": 3, "d": 3},
			strengths: map[string]float64{"a": 9, "c": 1, "d": 2},
			want:      map[string]int{"c": 3, "d": 4, "a": 5},
			refined:   1,
		},
	} {
		t.Run(c.name, func(t *testing.T) {
			got := RefineQuery(c.grades, c.strengths)
			if !maps.Equal(got.Labels, c.want) || got.Grades != c.refined || got.Skipped != c.skipped {
				t.Errorf("got %+v, want labels %v, %d refined, %d skipped", got, c.want, c.refined, c.skipped)
			}
			// Whatever the strengths, a higher grade never gets a label at or below a lower one's.
			for d, g := range c.grades {
				for e, h := range c.grades {
					if g > h && got.Labels[d] <= got.Labels[e] {
						t.Errorf("%s (grade %d) got label %d, not above %s (grade %d) at %d", d, g, got.Labels[d], e, h, got.Labels[e])
					}
				}
			}
		})
	}
}
