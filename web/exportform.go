package web

import (
	"cmp"
	"net/url"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/export"
	"github.com/pertinent/pertinent/rankeval"
	"github.com/pertinent/pertinent/store"
)

// policyForm is the label policy as forms and API query strings spell it. Every field has a
// default, so an empty query string asks for the usual policy: adjudicated grade first, then
// the median of at least one grade, nothing else left out.
type policyForm struct {
	Adjudication       string // "first" or "ignore"
	Consensus          string
	MinJudgments       string
	MaxDisagreement    string // empty: no limit
	ExcludeCannotJudge bool
	ExcludeFlagged     bool
	ExcludeGold        bool
	FillFrom           string // a source's name, or empty
}

func readPolicyForm(v url.Values) policyForm {
	return policyForm{Adjudication: cmp.Or(v.Get("adjudication"), "first"), Consensus: cmp.Or(v.Get("consensus"), string(export.ConsensusMedian)),
		MinJudgments: cmp.Or(strings.TrimSpace(v.Get("min_judgments")), "1"), MaxDisagreement: strings.TrimSpace(v.Get("max_disagreement")),
		ExcludeCannotJudge: checked(v, "exclude_cannot_judge"), ExcludeFlagged: checked(v, "exclude_flagged"), ExcludeGold: checked(v, "exclude_gold"),
		FillFrom: strings.TrimSpace(v.Get("fill_from"))}
}

// checked reads a checkbox (browsers send "on") or an API flag ("1", "true").
func checked(v url.Values, name string) bool {
	switch v.Get(name) {
	case "on", "1", "true", "yes":
		return true
	}
	return false
}

func (f policyForm) policy() (export.LabelPolicy, error) {
	p := export.LabelPolicy{AdjudicationFirst: f.Adjudication != "ignore", Consensus: export.Consensus(f.Consensus),
		ExcludeCannotJudge: f.ExcludeCannotJudge, ExcludeFlagged: f.ExcludeFlagged, ExcludeGold: f.ExcludeGold, FillFrom: f.FillFrom}
	n, err := strconv.Atoi(f.MinJudgments)
	if err != nil || n < 1 {
		return p, &pertinent.Error{Code: pertinent.Invalid, Message: "the least number of judgments must be a whole number of at least 1"}
	}
	p.MinJudgments = n
	if f.MaxDisagreement != "" {
		d, err := strconv.Atoi(f.MaxDisagreement)
		if err != nil || d < 0 {
			return p, &pertinent.Error{Code: pertinent.Invalid, Message: "the largest disagreement must be empty or a whole number of at least 0"}
		}
		p.MaxDisagreement = &d
	}
	if err := p.Validate(); err != nil {
		return p, err
	}
	return p, nil
}

// exportForm is the export page's form, also the API's query string.
type exportForm struct {
	policyForm
	Format string
	Split  string // "none", "ratio" or "folds"; the API may also give the ratios here
	Ratios string
	Folds  string
	Seed   string
	// Refine orders SVMlight labels within each grade by the preference judgments.
	Refine bool
}

func readExportForm(v url.Values) exportForm {
	f := exportForm{policyForm: readPolicyForm(v), Format: cmp.Or(v.Get("format"), string(store.FormatSVMlight)), Split: v.Get("split"),
		Ratios: cmp.Or(strings.TrimSpace(v.Get("ratios")), "0.8,0.1,0.1"), Folds: strings.TrimSpace(v.Get("folds")),
		Seed: cmp.Or(strings.TrimSpace(v.Get("seed")), "1"), Refine: checked(v, "refine_by_preferences")}
	// split=0.8,0.1,0.1 is short for split=ratio&ratios=0.8,0.1,0.1; folds=K alone asks for folds.
	if strings.Contains(f.Split, ",") {
		f.Split, f.Ratios = "ratio", f.Split
	}
	if f.Split == "" {
		f.Split = "none"
		if f.Folds != "" {
			f.Split = "folds"
		}
	}
	f.Folds = cmp.Or(f.Folds, "5") // only now: an empty folds field chose the split above
	return f
}

func (f exportForm) request() (store.ExportRequest, error) {
	var req store.ExportRequest
	var err error
	if req.Policy, err = f.policy(); err != nil {
		return req, err
	}
	req.Format = store.ExportFormat(f.Format)
	req.RefineByPreferences = f.Refine
	seed, err := strconv.ParseUint(f.Seed, 10, 64)
	if err != nil {
		return req, &pertinent.Error{Code: pertinent.Invalid, Message: "the seed must be a whole number of at least 0"}
	}
	req.Split = export.SplitSpec{Method: "none", Seed: seed}
	switch f.Split {
	case "none":
	case "ratio":
		req.Split.Method = "ratio"
		if req.Split.Ratios, err = export.ParseRatios(f.Ratios); err != nil {
			return req, err
		}
	case "folds", "k-fold":
		k, err := strconv.Atoi(f.Folds)
		if err != nil {
			return req, &pertinent.Error{Code: pertinent.Invalid, Message: "the number of folds must be a whole number"}
		}
		req.Split.Method, req.Split.Folds = "k-fold", k
	default:
		return req, &pertinent.Error{Code: pertinent.Invalid, Message: "split must be none, ratio or folds"}
	}
	return req, nil
}

// evalForm is the evaluate page's options, also the API's query string.
type evalForm struct {
	policyForm
	K         string
	Gain      string
	Threshold string
}

func readEvalForm(v url.Values) evalForm {
	return evalForm{policyForm: readPolicyForm(v), K: cmp.Or(strings.TrimSpace(v.Get("k")), "10"),
		Gain: cmp.Or(v.Get("gain"), "exponential"), Threshold: cmp.Or(strings.TrimSpace(v.Get("threshold")), "2")}
}

func (f evalForm) request() (store.EvalRequest, error) {
	var req store.EvalRequest
	var err error
	if req.Policy, err = f.policy(); err != nil {
		return req, err
	}
	if req.K, err = strconv.Atoi(f.K); err != nil || req.K < 0 {
		return req, &pertinent.Error{Code: pertinent.Invalid, Message: "the cut-off k must be a whole number (0 for the whole ranking)"}
	}
	if req.Threshold, err = strconv.Atoi(f.Threshold); err != nil || req.Threshold < 1 {
		return req, &pertinent.Error{Code: pertinent.Invalid, Message: "the relevance threshold must be a grade of at least 1"}
	}
	switch f.Gain {
	case "exponential":
		req.Gain = rankeval.GainExponential
	case "linear":
		req.Gain = rankeval.GainLinear
	default:
		return req, &pertinent.Error{Code: pertinent.Invalid, Message: "gain must be exponential or linear"}
	}
	return req, nil
}
