package agreement

import "slices"

// ItemConsensus is the grade each simple rule gives one item.
//
//   - Median is the lower median (MedianGrade).
//   - Majority is the most frequent grade, ties broken as MajorityGrade says.
//   - Mean is the average grade.
type ItemConsensus struct {
	Item     string  `json:"item"`
	N        int     `json:"n"`
	Median   int     `json:"median"`
	Majority int     `json:"majority"`
	Mean     float64 `json:"mean"`
}

// Consensus returns the median, majority and mean grade of every item, in
// ItemNames order.
func Consensus(d *Data) []ItemConsensus {
	ix := d.built()
	out := make([]ItemConsensus, ix.nItems())
	buf := make([]uint8, 0, ix.maxM)
	for i := range out {
		gs := ix.grade[ix.start[i]:ix.start[i+1]]
		buf = append(buf[:0], gs...)
		slices.Sort(buf)
		sum := 0
		for _, g := range buf {
			sum += int(g)
		}
		out[i] = ItemConsensus{
			Item:     d.itemName(int32(i)),
			N:        len(buf),
			Median:   int(LowerMedian(buf)),
			Majority: majoritySorted(buf),
			Mean:     float64(sum) / float64(len(buf)),
		}
	}
	return out
}

// GradeValue is an integer type grades are held in: int for plain lists, int8 and
// uint8 in packed rows.
type GradeValue interface{ ~int | ~int8 | ~uint8 }

// MedianGrade is the lower median of grades (in any order, not empty): for an even
// count the smaller of the two middle grades, so the result is always a grade on the
// scale and never rounds up relevance nobody gave. The label policy's "median".
func MedianGrade(grades []int) int {
	return LowerMedian(sortedCopy(grades))
}

// MajorityGrade is the most frequent of grades (in any order, not empty). Among equally
// frequent grades the one closest to the median wins, where the median of an even count
// is the midpoint of the two middle grades (as in {1,1,2,4,4,5}: 1 and 4 tie, the
// midpoint of 2 and 4 is 3, so 4); a grade as far below as another is above it loses to
// the lower one. The midpoint rather than the lower median keeps the tie-break centred:
// the lower grade is preferred once, at the last step, not twice. The label policy's
// "majority" and the adjudication page's.
func MajorityGrade(grades []int) int {
	return majoritySorted(sortedCopy(grades))
}

// LowerMedian is MedianGrade of grades already sorted ascending.
func LowerMedian[G GradeValue](sorted []G) G {
	return sorted[(len(sorted)-1)/2]
}

// LeaveOneOutMedian is the lower median of sorted (ascending) with one copy of g taken
// out: the consensus of the other raters against which a rater's grade g is compared.
// sorted must hold g and at least one other grade.
func LeaveOneOutMedian[G GradeValue](sorted []G, g G) G {
	pos, _ := slices.BinarySearch(sorted, g)
	// The lower median of the m-1 others is at index (m-2)/2 of the rest; at or after
	// the removed copy, the rest is shifted by one.
	idx := (len(sorted) - 2) / 2
	if pos <= idx {
		idx++
	}
	return sorted[idx]
}

func sortedCopy(gs []int) []int {
	s := slices.Clone(gs)
	slices.Sort(s)
	return s
}

// majoritySorted is MajorityGrade of grades sorted ascending.
func majoritySorted[G GradeValue](sorted []G) int {
	n := len(sorted)
	mid2 := int(sorted[(n-1)/2]) + int(sorted[n/2]) // twice the median
	best, bestC, bestD := 0, -1, 0
	for i := 0; i < n; {
		g := sorted[i]
		j := i + 1
		for j < n && sorted[j] == g {
			j++
		}
		c, dist := j-i, absInt(2*int(g)-mid2)
		// Runs come in ascending order: only a strictly higher count or a strictly
		// closer grade replaces the best, so full ties keep the lower grade.
		if c > bestC || (c == bestC && dist < bestD) {
			best, bestC, bestD = int(g), c, dist
		}
		i = j
	}
	return best
}
