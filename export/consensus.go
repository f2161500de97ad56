package export

import "slices"

// medianGrade is the lower median: with an even count, the smaller of the
// two middle grades (a grade must be a point on the scale, and the lower
// one does not overstate relevance).
func medianGrade(gs []int) int {
	s := slices.Clone(gs)
	slices.Sort(s)
	return s[(len(s)-1)/2]
}

// majorityGrade is the most frequent grade; among equally frequent grades
// the one closest to the lower median wins, then the lower grade.
func majorityGrade(gs []int) int {
	count := make(map[int]int, len(gs))
	for _, g := range gs {
		count[g]++
	}
	med := medianGrade(gs)
	best, bestN := 0, -1
	for g, n := range count {
		if n > bestN || n == bestN && closer(g, best, med) {
			best, bestN = g, n
		}
	}
	return best
}

// closer reports whether a is a better tie pick than b around med.
func closer(a, b, med int) bool {
	da, db := abs(a-med), abs(b-med)
	if da != db {
		return da < db
	}
	return a < b
}

// meanGrade is the arithmetic mean rounded half up, computed exactly in
// integers: floor((2*sum + n) / (2n)).
func meanGrade(gs []int) int {
	sum := 0
	for _, g := range gs {
		sum += g
	}
	num, den := 2*sum+len(gs), 2*len(gs)
	q := num / den
	if num%den != 0 && num < 0 { // floor, not truncation, for negative sums
		q--
	}
	return q
}

func abs(x int) int {
	if x < 0 {
		return -x
	}
	return x
}
