package web

import (
	"net/http"
	"strconv"

	"github.com/pertinent/pertinent/store"
)

// The lead's view of the calibration round: its pairs by known grade and each assessor's
// score against the known grades.

type calibrationScoresData struct {
	store.CalibrationRound
	Levels []string
	Scores table
}

func (s *Server) calibrationScoresPage(w http.ResponseWriter, r *http.Request) {
	c, err := s.store.CalibrationRound(r.Context(), currentProject(r).ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	data := calibrationScoresData{CalibrationRound: c}
	for g, n := range c.ByGrade {
		data.Levels = append(data.Levels, strconv.Itoa(n)+" of grade "+strconv.Itoa(g))
	}
	data.Scores = table{Name: "calibration", File: "calibration-scores", RowHead: true, Empty: "No assessor has answered the round yet.",
		Caption: "Each assessor's answers against the known grades",
		Columns: cols("assessor", "Assessor", "answered", "Answered", "exact", "Same as known", "exact_low", "95% interval from", "exact_high", "to",
			"within_one", "Within one grade", "mean_abs", "Mean distance", "mean_signed", "Mean given minus known", "disturbing", "Flagged disturbing")}
	for _, a := range c.Scores {
		u := a.Assessor
		answered := strconv.Itoa(a.Answered) + " of " + strconv.Itoa(c.Pairs)
		data.Scores.Rows = append(data.Scores.Rows, row{Cells: []cell{{V: u}, {V: answered},
			figCell(figPct("calibration-exact:"+u, a.Exact)), figCell(figPct("calibration-exact-low:"+u, a.ExactCI.Lo)), figCell(figPct("calibration-exact-high:"+u, a.ExactCI.Hi)),
			figCell(figPct("calibration-within-one:"+u, a.WithinOne)), figCell(figV("calibration-mean-abs:"+u, a.MeanAbs, 2)),
			figCell(figSigned("calibration-mean-signed:"+u, a.MeanSigned)), {V: strconv.Itoa(a.Disturbing)}}})
	}
	if s.offerTables(w, r, &data.Scores) {
		return
	}
	s.render(w, r, http.StatusOK, "calibrationscores", "", s.newView(r, "Calibration round: "+currentProject(r).Name, data))
}

// apiCalibration answers with the figures of the calibration round page.
func (s *Server) apiCalibration(w http.ResponseWriter, r *http.Request) {
	c, err := s.store.CalibrationRound(r.Context(), currentProject(r).ID)
	if err != nil {
		s.apiStoreError(w, r, err)
		return
	}
	apiJSON(w, c)
}
