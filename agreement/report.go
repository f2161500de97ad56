package agreement

// Options tunes Report.
type Options struct {
	Level     float64        // two-sided level of every interval; 0 means 0.95
	Bootstrap int            // bootstrap replicates; 0 skips the bootstrap
	Seed      uint64         // bootstrap seed
	Workers   int            // bootstrap goroutines; 0 means GOMAXPROCS
	Gold      map[string]int // optional gold grades by item name
}

// Report is the headline set of agreement figures for one data set.
// PairableItems counts items with two or more ratings. Undefined maps each
// headline field that is null to the reason. Bootstrap is present only
// when requested.
type Report struct {
	Scale         int     `json:"scale"`
	Items         int     `json:"items"`
	Raters        int     `json:"raters"`
	Judgments     int     `json:"judgments"`
	PairableItems int     `json:"pairable_items"`
	Level         float64 `json:"level"`

	FleissKappa     Value        `json:"fleiss_kappa"`
	FleissKappaBand string       `json:"fleiss_kappa_band"`
	Fleiss          FleissResult `json:"fleiss"`

	KrippendorffAlpha     AlphaSet          `json:"krippendorff_alpha"`
	KrippendorffAlphaBand map[string]string `json:"krippendorff_alpha_band"`

	Cohen                   []PairKappa `json:"cohen"`
	MeanQuadraticKappa      Value       `json:"mean_quadratic_kappa"`
	MeanQuadraticKappaPairs int         `json:"mean_quadratic_kappa_pairs"`
	MeanQuadraticKappaBand  string      `json:"mean_quadratic_kappa_band"`

	PercentAgreement  Value `json:"percent_agreement"`
	AdjacentAgreement Value `json:"adjacent_agreement"`

	Bootstrap *BootstrapResult `json:"bootstrap,omitempty"`

	RaterStats  []RaterStats `json:"rater_stats"`
	GoldSkipped int          `json:"gold_skipped,omitempty"`

	KappaBands BandScale `json:"kappa_bands"`
	AlphaBands BandScale `json:"alpha_bands"`

	Undefined map[string]string `json:"undefined,omitempty"`
}

// Compute builds the Report for d in one pass over the judgments (plus the
// bootstrap passes when requested).
func Compute(d *Data, o Options) Report {
	if o.Level <= 0 || o.Level >= 1 {
		o.Level = 0.95
	}
	ix := d.built()
	t := tallyOf(ix, true)
	r := Report{
		Scale:         ix.k,
		Items:         ix.nItems(),
		Raters:        ix.nRaters(),
		Judgments:     ix.nJudgments(),
		PairableItems: pairableUnits(t),
		Level:         o.Level,
		KappaBands:    LandisKoch,
		AlphaBands:    KrippendorffThresholds,
		Undefined:     map[string]string{},
	}
	r.Fleiss = fleissOf(t, o.Level)
	r.FleissKappa = r.Fleiss.Kappa
	r.FleissKappaBand = LandisKoch.Classify(r.FleissKappa)

	r.KrippendorffAlpha = alphaSet(coincidence(t), t.k)
	r.KrippendorffAlphaBand = map[string]string{}
	for _, m := range Metrics {
		v := r.KrippendorffAlpha.Get(m)
		r.KrippendorffAlphaBand[m.String()] = KrippendorffThresholds.Classify(v)
		note(r.Undefined, "krippendorff_alpha."+m.String(), v)
	}

	r.Cohen = pairKappas(ix, t, o.Level)
	r.MeanQuadraticKappa, r.MeanQuadraticKappaPairs = meanQuadraticKappa(r.Cohen)
	r.MeanQuadraticKappaBand = LandisKoch.Classify(r.MeanQuadraticKappa)

	raw := rawOf(t)
	r.PercentAgreement, r.AdjacentAgreement = raw.Exact, raw.Adjacent

	if o.Bootstrap > 0 {
		b := bootstrapOf(ix, t, BootstrapOptions{Replicates: o.Bootstrap, Seed: o.Seed, Level: o.Level, Workers: o.Workers})
		r.Bootstrap = &b
	}
	r.RaterStats, r.GoldSkipped = raterStatsOf(d, ix, r.Cohen, o.Gold)

	note(r.Undefined, "fleiss_kappa", r.FleissKappa)
	note(r.Undefined, "mean_quadratic_kappa", r.MeanQuadraticKappa)
	note(r.Undefined, "percent_agreement", r.PercentAgreement)
	note(r.Undefined, "adjacent_agreement", r.AdjacentAgreement)
	if r.Raters < 2 {
		r.Undefined["raters"] = "fewer than two raters"
	}
	return r
}

func note(m map[string]string, key string, v Value) {
	if !v.OK {
		m[key] = v.Why
	}
}
