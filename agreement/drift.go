package agreement

import "strconv"

// DriftWindow is how many of a rater's latest compared grades make the "recent" side of the
// drift figure.
const DriftWindow = 50

// Compared is one grade compared with the consensus of the other raters: when it was given
// (At, with ID breaking ties) and whether it agreed.
type Compared struct {
	At, ID int64
	Agree  bool
}

func (c Compared) before(o Compared) bool {
	return c.At < o.At || (c.At == o.At && c.ID < o.ID)
}

// Drift follows one rater's compared grades in any order and keeps only the DriftWindow
// latest (by time, then id), in a sorted ring: buf[head] is the earliest once full. Grades
// that come in time order take the O(1) path (the earliest is overwritten); others shift
// part of the window. It allocates nothing, so a desk can hold one per rater.
type Drift struct {
	buf         [DriftWindow]Compared
	head, n     int
	windowAgree int // agreeing grades in the window
	total       int // grades compared
	totalAgree  int // of them agreeing
}

func (w *Drift) at(i int) *Compared { return &w.buf[(w.head+i)%DriftWindow] }

// Add counts one compared grade.
func (w *Drift) Add(c Compared) {
	w.total++
	if c.Agree {
		w.totalAgree++
	}
	if w.n == DriftWindow && !w.at(0).before(c) {
		return // earlier than everything kept
	}
	// Position among the kept ones, counted from the end (time order is the usual case).
	p := w.n
	for p > 0 && c.before(*w.at(p - 1)) {
		p--
	}
	if w.n < DriftWindow {
		for i := w.n; i > p; i-- {
			*w.at(i) = *w.at(i - 1)
		}
		w.n++
	} else {
		if w.at(0).Agree {
			w.windowAgree--
		}
		if p == w.n {
			// The latest so far: it takes the earliest one's place, which becomes the end.
			w.buf[w.head] = c
			w.head = (w.head + 1) % DriftWindow
			if c.Agree {
				w.windowAgree++
			}
			return
		}
		// Drop the earliest: shift the ones before p down, then put c just before them.
		for i := 0; i+1 < p; i++ {
			*w.at(i) = *w.at(i + 1)
		}
		p--
	}
	*w.at(p) = c
	if c.Agree {
		w.windowAgree++
	}
}

// Compared is how many grades were added.
func (w *Drift) Compared() int { return w.total }

// Shares compares the share of grades agreeing with consensus over the last DriftWindow
// (recent) with the share over all earlier ones (earlierN of them); diff is recent − earlier.
// All three are undefined until more than DriftWindow grades were added.
func (w *Drift) Shares() (recent, earlier, diff Value, earlierN int) {
	if w.total <= DriftWindow {
		why := undefined("needs more than " + strconv.Itoa(DriftWindow) + " grades compared with consensus")
		return why, why, why, 0
	}
	cut := w.total - DriftWindow
	r, e := float64(w.windowAgree)/float64(DriftWindow), float64(w.totalAgree-w.windowAgree)/float64(cut)
	return defined(r), defined(e), defined(r - e), cut
}
