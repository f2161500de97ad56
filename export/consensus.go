package export

// meanGrade is the arithmetic mean rounded half up, computed exactly in
// integers: floor((2*sum + n) / (2n)). The median and majority rules are
// agreement's (MedianGrade, MajorityGrade), so the adjudication page and the
// exports name the same grade.
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
