package web

import (
	"errors"
	"fmt"
	"html/template"
	"net/http"
	"net/url"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"github.com/pertinent/pertinent/store"
)

// The disagreement queue and the adjudication of one pair.

type queueRow struct {
	store.QueueItem
	Title  string
	Href   string
	Grades string
}

type queueData struct {
	Rows       []queueRow
	Total      int
	Shown      int
	Queries    []store.Query
	Assessors  []store.AssessorFigures
	Filter     store.QueueFilter
	Scale      int
	FlagWeight int
	CSV        string
	Self       string
}

const queuePage = 200

func queueFilter(v url.Values) store.QueueFilter {
	var f store.QueueFilter
	f.QueryID, _ = strconv.ParseInt(v.Get("query"), 10, 64)
	f.UserID, _ = strconv.ParseInt(v.Get("assessor"), 10, 64)
	f.MinSeverity, _ = strconv.Atoi(v.Get("min"))
	return f
}

func (s *Server) queuePage(w http.ResponseWriter, r *http.Request) {
	d, ok := s.desk(w, r)
	if !ok {
		return
	}
	f := queueFilter(r.URL.Query())
	items, err := s.store.Queue(r.Context(), d, f)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	// The page draws its own rows: they are the keyboard's and the filter's (lead.js), show
	// only the first page of the queue and gather several columns into tags.
	tab := table{Name: "queue", File: "disagreement-queue", Columns: cols("pair", "", "query", "", "query_text", "", "severity", "", "flagged", "",
		"gold_miss", "", "spread", "", "variance", "", "grades", "", "cannot_judge", "", "reopened", "")}
	for _, it := range items {
		tab.Rows = append(tab.Rows, plain(strconv.FormatInt(it.PairID, 10), it.Query.ExternalID, it.Query.Text, strconv.Itoa(it.Severity),
			strconv.FormatBool(it.Flagged), strconv.FormatBool(it.GoldMiss), strconv.Itoa(it.Spread), csvFloat(it.Variance),
			gradeList(it.Grades), strconv.Itoa(it.Cannot), strconv.FormatBool(it.Reopened)))
	}
	if s.offerTables(w, r, &tab) {
		return
	}
	data := queueData{Total: len(items), Filter: f, Scale: d.Scale, FlagWeight: 2 * d.Scale, CSV: tab.Href, Self: r.URL.RequestURI()}
	if data.Queries, err = s.store.DeskQueries(r.Context(), d); err != nil {
		s.storeError(w, r, err)
		return
	}
	data.Assessors = d.Assessors
	if len(items) > queuePage {
		items = items[:queuePage]
	}
	data.Shown = len(items)
	ids := make([]int64, len(items))
	for i, it := range items {
		ids[i] = it.PairID
	}
	titles, err := s.store.DocumentTitles(r.Context(), ids)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	pid := currentProject(r).ID
	for _, it := range items {
		data.Rows = append(data.Rows, queueRow{QueueItem: it, Title: titles[it.PairID], Grades: gradeList(it.Grades),
			Href: fmt.Sprintf("/projects/%d/pairs/%d/adjudicate?next=%s", pid, it.PairID, url.QueryEscape(r.URL.RequestURI()))})
	}
	if r.Header.Get("HX-Request") == "true" {
		s.render(w, r, http.StatusOK, "queue", "queue-table", s.newView(r, "", data))
		return
	}
	s.render(w, r, http.StatusOK, "queue", "", s.newView(r, "Disagreement queue: "+currentProject(r).Name, data))
}

func gradeList(gs []int) string {
	parts := make([]string, len(gs))
	for i, g := range gs {
		parts[i] = strconv.Itoa(g)
	}
	return strings.Join(parts, " ")
}

type judgmentRow struct {
	store.PairJudgment
	Time string
}

type adjudicateData struct {
	Review     store.PairReview
	Judgments  []judgmentRow
	Checked    int
	Body       template.HTML
	Scale      []store.ScaleLevel
	Next       string
	Mean       string
	DSGrade    int
	DSShare    string
	DSOK       bool
	DSReady    bool
	Current    *store.Adjudication
	Error      string
	Background bool
}

func (s *Server) pairInProject(w http.ResponseWriter, r *http.Request) (int64, bool) {
	id, err := strconv.ParseInt(chi.URLParam(r, "pair"), 10, 64)
	if err == nil {
		var p int64
		if p, err = s.store.ProjectIDByPair(r.Context(), id); err == nil && p != currentProject(r).ID {
			err = store.ErrNotFound
		}
	}
	var num *strconv.NumError
	if errors.As(err, &num) || errors.Is(err, store.ErrNotFound) {
		s.fail(w, r, http.StatusNotFound, "That pair is not part of this project.")
		return 0, false
	}
	if err != nil { // the database failed: not a missing pair
		s.storeError(w, r, err)
		return 0, false
	}
	return id, true
}

func (s *Server) adjudicatePage(w http.ResponseWriter, r *http.Request) {
	id, ok := s.pairInProject(w, r)
	if !ok {
		return
	}
	s.renderAdjudicate(w, r, id, http.StatusOK, "", localPath(r.URL.Query().Get("next")))
}

func (s *Server) renderAdjudicate(w http.ResponseWriter, r *http.Request, id int64, status int, msg, next string) {
	rev, err := s.store.PairReview(r.Context(), id)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	scale, err := s.store.Scale(r.Context(), currentProject(r).ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	d, ok := s.desk(w, r)
	if !ok {
		return
	}
	if next == "/" {
		next = fmt.Sprintf("/projects/%d/queue", currentProject(r).ID)
	}
	data := adjudicateData{Review: rev, Body: documentBody(rev.Document), Scale: scale, Next: next, Error: msg, Background: d.Background()}
	data.Checked = -1
	for _, j := range rev.Judgments {
		data.Judgments = append(data.Judgments, judgmentRow{PairJudgment: j, Time: seconds(j.TimeSpentMs)})
	}
	if rev.Consensus != nil {
		data.Mean = strconv.FormatFloat(rev.Consensus.Mean, 'f', 2, 64)
	}
	g, post, dsOK, ready := d.DawidSkene(id)
	data.DSReady, data.DSOK, data.DSGrade = ready, dsOK, g
	if dsOK && g < len(post) {
		data.DSShare = strconv.FormatFloat(100*post[g], 'f', 0, 64) + "%"
	}
	for i := range rev.History {
		if rev.History[i].Current {
			data.Current = &rev.History[i]
			data.Checked = rev.History[i].Grade
		}
	}
	s.render(w, r, status, "adjudicate", "", s.newView(r, fmt.Sprintf("Adjudicate pair %d", id), data))
}

func (s *Server) adjudicateSubmit(w http.ResponseWriter, r *http.Request) {
	id, ok := s.pairInProject(w, r)
	if !ok {
		return
	}
	u, _ := currentUser(r)
	next := localPath(r.PostFormValue("next"))
	g, err := strconv.Atoi(r.PostFormValue("grade"))
	if err != nil {
		s.renderAdjudicate(w, r, id, http.StatusBadRequest, "Choose the final grade first.", next)
		return
	}
	if _, err := s.store.Adjudicate(r.Context(), id, u.ID, g, r.PostFormValue("rationale")); err != nil {
		if store.ErrorCode(err) == store.CodeInvalid {
			var e *store.Error
			errors.As(err, &e)
			s.renderAdjudicate(w, r, id, http.StatusBadRequest, e.Message, next)
			return
		}
		s.storeError(w, r, err)
		return
	}
	if next == "/" {
		next = fmt.Sprintf("/projects/%d/queue", currentProject(r).ID)
	}
	http.Redirect(w, r, next, http.StatusSeeOther)
}
