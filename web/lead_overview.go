package web

import (
	"fmt"
	"net/http"
	"strconv"
	"time"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/store"
)

// The overview: progress, the headline agreement figures, judgments per day and flagged pairs.

type headline struct {
	Label    string
	Value    figure
	Lo, Hi   figure
	Interval string // how the interval is made
	Band     string
	Bands    string // which reading of the bands
	Pending  bool   // interval still being computed
}

type overviewData struct {
	Progress    store.Progress
	Bar         stackedBar
	Figures     []figure
	Headline    []headline
	Desk        *store.Desk
	PerDay      barChart
	Days        []store.DayCount
	TimeMedian  figure
	TimeQ1      figure
	TimeQ3      figure
	Flagged     figure
	Replicates  int
	Background  bool
	Tables      overviewTables
	PairsWithJ  int
	GeneratedIn string
}

// overviewTables are the overview's tables. Flagged lists pairs answered "cannot judge",
// disturbing ones first, never who flagged. The page draws Figures itself: its rows are
// sentences around several figures each, with the progress bar beside.
type overviewTables struct {
	Figures, Days, Flagged table
}

func (s *Server) overview(w http.ResponseWriter, r *http.Request) {
	d, ok := s.desk(w, r)
	if !ok {
		return
	}
	p := d.Progress
	rep := d.Report
	boot, ready := d.Bootstrap()
	pct := int(rep.Level*100 + 0.5)
	bootNote := fmt.Sprintf("%d%% percentile bootstrap, %d item resamples, seed %d", pct, d.BootstrapCount, store.BootstrapSeed)
	alpha := headline{Label: "Krippendorff's alpha (ordinal)", Value: figV("alpha-ordinal", rep.KrippendorffAlpha.Ordinal, 3),
		Interval: bootNote, Band: rep.KrippendorffAlphaBand["ordinal"], Bands: agreement.KrippendorffThresholds.Source, Pending: !ready}
	mean := headline{Label: "Mean pairwise Cohen's kappa (quadratic weights)", Value: figV("mean-kappa", rep.MeanQuadraticKappa, 3),
		Interval: bootNote + fmt.Sprintf("; over %d assessor pairs", rep.MeanQuadraticKappaPairs), Band: rep.MeanQuadraticKappaBand,
		Bands: agreement.LandisKoch.Source, Pending: !ready}
	if ready {
		alpha.Lo, alpha.Hi = figV("alpha-ordinal-lo", boot.Alpha.Ordinal.Lo, 3), figV("alpha-ordinal-hi", boot.Alpha.Ordinal.Hi, 3)
		mean.Lo, mean.Hi = figV("mean-kappa-lo", boot.MeanQuadraticKappa.Lo, 3), figV("mean-kappa-hi", boot.MeanQuadraticKappa.Hi, 3)
	}
	fleiss := headline{Label: "Fleiss' kappa", Value: figV("fleiss-kappa", rep.FleissKappa, 3),
		Lo: figV("fleiss-kappa-lo", rep.Fleiss.CI.Lo, 3), Hi: figV("fleiss-kappa-hi", rep.Fleiss.CI.Hi, 3),
		Interval: fmt.Sprintf("%d%% normal interval with the Fleiss, Nee & Landis (1979) null SE; over %d pairs with %d grades each (%d others left out)",
			pct, rep.Fleiss.ItemsUsed, rep.Fleiss.RatersPerItem, rep.Fleiss.ItemsSkipped),
		Band: rep.FleissKappaBand, Bands: agreement.LandisKoch.Source}

	data := overviewData{
		Progress: p, Desk: d, Headline: []headline{fleiss, alpha, mean},
		Bar: newStackedBar(fmt.Sprintf("%d pairs: %d done, %d in progress, %d untouched", p.Pairs, p.Done, p.InProgress, p.Untouched),
			[]int{p.Done, p.InProgress, p.Untouched}, []string{"seg-done", "seg-progress", "seg-untouched"}, []string{"done", "in progress", "untouched"}),
		Figures: []figure{figN("pairs", p.Pairs), figN("done", p.Done), figN("in-progress", p.InProgress), figN("untouched", p.Untouched),
			figN("judgments", d.Judgments), figN("graded", d.Graded), figN("cannot-judge", d.CannotJudge)},
		Days:       d.PerDay,
		TimeMedian: figMs("time-median", d.TimeMedianMs), TimeQ1: figMs("time-q1", d.TimeQ1Ms), TimeQ3: figMs("time-q3", d.TimeQ3Ms),
		Flagged:    figN("flagged", d.Flagged),
		Replicates: d.BootstrapCount, Background: d.Background(),
		GeneratedIn: d.BuildTook.Round(time.Millisecond).String(),
	}
	flagged, err := s.store.FlaggedPairs(r.Context(), currentProject(r).ID, 100)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	labels := make([]string, len(d.PerDay))
	counts := make([]int, len(d.PerDay))
	for i, c := range d.PerDay {
		labels[i], counts[i] = c.Day, c.Judgments
	}
	data.PerDay = newBarChart("perday", "Judgments per day", fmt.Sprintf("%d days from %s; the numbers are in the table beside.", len(labels), first(labels)), labels, counts, 560, 160, false)

	t := &data.Tables
	t.Figures = table{Name: "figures", File: "overview", Columns: cols("figure", "", "value", "", "lo", "", "hi", "", "band", "", "note", "")}
	for _, f := range data.Figures {
		t.Figures.Rows = append(t.Figures.Rows, plain(f.Name, f.Value, "", "", "", ""))
	}
	t.Figures.Rows = append(t.Figures.Rows, plain("time-per-judgment-ms", strconv.Itoa(d.TimeMedianMs), strconv.Itoa(d.TimeQ1Ms), strconv.Itoa(d.TimeQ3Ms), "", "median; interquartile range"),
		plain("flagged", strconv.Itoa(d.Flagged), "", "", "", ""))
	for _, h := range data.Headline {
		t.Figures.Rows = append(t.Figures.Rows, plain(h.Value.Name, h.Value.Value, h.Lo.Value, h.Hi.Value, h.Band, h.Interval))
	}
	t.Days = table{Name: "days", File: "judgments-per-day", Class: "compact", Columns: []column{{Key: "day", Label: "Day (UTC)"}, {Key: "judgments", Label: "Judgments", Class: "num"}}}
	for _, c := range d.PerDay {
		t.Days.Rows = append(t.Days.Rows, plain(c.Day, strconv.Itoa(c.Judgments)))
	}
	t.Flagged = table{Name: "flagged", File: "flagged-pairs", Class: "flagged", Columns: cols("pair", "", "query", "Query", "document", "Document", "reason", "Reason", "assessors", "Assessors")}
	for _, f := range flagged {
		row := plain(strconv.FormatInt(f.PairID, 10), f.QueryText, f.DocumentTitle, f.Reason, strconv.Itoa(f.Count))
		row.Pair, row.Cells[3].Text = f.PairID, reasonLabel(f.Reason)
		if f.Reason == "disturbing" {
			row.Class = "disturbing"
		}
		t.Flagged.Rows = append(t.Flagged.Rows, row)
	}
	if s.offerTables(w, r, &t.Figures, &t.Days, &t.Flagged) {
		return
	}
	s.render(w, r, http.StatusOK, "overview", "", s.newView(r, "Overview: "+currentProject(r).Name, data))
}

func first(xs []string) string {
	if len(xs) == 0 {
		return "no day yet"
	}
	return xs[0]
}
