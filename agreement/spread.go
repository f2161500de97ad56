package agreement

// Spread returns the range (highest − lowest grade) and the population variance of grades
// sorted ascending: how far one item's raters are apart. Both are 0 for no grades.
func Spread(sorted []int) (spread int, variance float64) {
	n := len(sorted)
	if n == 0 {
		return 0, 0
	}
	spread = sorted[n-1] - sorted[0]
	mean := 0.0
	for _, x := range sorted {
		mean += float64(x)
	}
	mean /= float64(n)
	for _, x := range sorted {
		variance += (float64(x) - mean) * (float64(x) - mean)
	}
	return spread, variance / float64(n)
}
