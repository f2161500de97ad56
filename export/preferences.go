package export

import (
	"bufio"
	"encoding/csv"
	"encoding/json"
	"io"
	"strconv"
)

// PreferencePair is a training pair from preference judgments: for Query, Count assessors
// judged Better the better document of the two and Worse the other. A pair judged both ways
// gives two rows, one per direction, so a learner may weigh or drop the contested ones;
// "about the same" and "neither relevant" give none.
type PreferencePair struct {
	Query  string `json:"query"`
	Better string `json:"better"`
	Worse  string `json:"worse"`
	Count  int    `json:"count"`
}

// PreferencePairsHeader is the CSV header WritePreferencePairsCSV writes.
var PreferencePairsHeader = []string{"query", "better", "worse", "count"}

// WritePreferencePairsCSV writes pairs as CSV with PreferencePairsHeader, in the order given.
func WritePreferencePairsCSV(w io.Writer, pairs []PreferencePair) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(PreferencePairsHeader); err != nil {
		return err
	}
	for _, p := range pairs {
		if err := cw.Write([]string{p.Query, p.Better, p.Worse, strconv.Itoa(p.Count)}); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// WritePreferencePairsJSONL writes pairs as JSON Lines, one object per pair.
func WritePreferencePairsJSONL(w io.Writer, pairs []PreferencePair) error {
	bw := bufio.NewWriter(w)
	enc := json.NewEncoder(bw)
	for _, p := range pairs {
		if err := enc.Encode(p); err != nil {
			return err
		}
	}
	return bw.Flush()
}
