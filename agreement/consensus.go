package agreement

import "slices"

// ItemConsensus is the grade each simple rule gives one item.
//
//   - Median is the lower median: for an even count, the smaller of the two
//     middle grades (a grade is always on the scale, and the rule never
//     rounds up relevance nobody gave).
//   - Majority is the most frequent grade; ties go to the grade closest to
//     the item's median (for even counts the midpoint of the two middle
//     grades), then to the lower grade.
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
	counts := make([]int, ix.k)
	for i := range out {
		gs := ix.grade[ix.start[i]:ix.start[i+1]]
		buf = append(buf[:0], gs...)
		slices.Sort(buf)
		clear(counts)
		sum := 0
		for _, g := range buf {
			counts[g]++
			sum += int(g)
		}
		out[i] = ItemConsensus{
			Item:     d.itemName(int32(i)),
			N:        len(buf),
			Median:   int(buf[(len(buf)-1)/2]),
			Majority: majority(counts, buf),
			Mean:     float64(sum) / float64(len(buf)),
		}
	}
	return out
}

// majority applies the tie rule of ItemConsensus; sorted holds the grades.
func majority(counts []int, sorted []uint8) int {
	n := len(sorted)
	mid2 := int(sorted[(n-1)/2]) + int(sorted[n/2]) // twice the median
	best, bestC, bestD := -1, -1, 0
	for g, c := range counts {
		if c == 0 {
			continue
		}
		dist := 2*g - mid2
		if dist < 0 {
			dist = -dist
		}
		// Ascending g: strictly better count or strictly closer wins, so
		// the lower grade keeps full ties.
		if c > bestC || (c == bestC && dist < bestD) {
			best, bestC, bestD = g, c, dist
		}
	}
	return best
}
