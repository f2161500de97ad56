package export

import (
	"bytes"
	"encoding/json"
	"testing"
	"time"
)

func TestManifestFromTally(t *testing.T) {
	p := LabelPolicy{AdjudicationFirst: true, Consensus: ConsensusMajority, MinJudgments: 3}
	m := NewManifest(p, time.Date(2026, 3, 4, 5, 6, 7, 0, time.FixedZone("x", 3600)))
	m.Agreement = map[string]float64{"krippendorff_alpha_ordinal": 0.815}
	m.Split = &SplitSpec{Method: "ratio", Ratios: &Ratios{Train: 0.8, Test: 0.2}, Seed: 9}
	m.Excluded = map[string]int{"gold pair": 2}
	tally := NewTally()
	if _, err := WriteAll(seq(sampleRows()), tally); err != nil {
		t.Fatal(err)
	}
	tally.Fill(&m)
	m.Files = []ManifestFile{{Name: "train.svmlight", Format: "svmlight", Rows: m.Rows}}
	var b bytes.Buffer
	if err := m.Write(&b); err != nil {
		t.Fatal(err)
	}
	var got map[string]any
	if err := json.Unmarshal(b.Bytes(), &got); err != nil {
		t.Fatal(err)
	}
	checks := map[string]any{
		"format_version":           float64(ManifestVersion),
		"created_at":               "2026-03-04T04:06:07Z",
		"rows":                     float64(3),
		"queries":                  float64(2),
		"label_policy_description": p.Describe(),
	}
	for k, v := range checks {
		if got[k] != v {
			t.Errorf("%s = %v, want %v", k, got[k], v)
		}
	}
	grades := got["grades"].(map[string]any)
	if grades["0"] != float64(1) || grades["2"] != float64(1) || grades["4"] != float64(1) || len(grades) != 3 {
		t.Errorf("grades %v", grades)
	}
	splits := got["splits"].(map[string]any)
	train := splits["train"].(map[string]any)
	if train["queries"] != float64(1) || train["rows"] != float64(2) || len(splits) != 2 {
		t.Errorf("splits %v", splits)
	}
	pol := got["label_policy"].(map[string]any)
	if pol["consensus"] != "majority" || pol["min_judgments"] != float64(3) || pol["max_disagreement"] != nil || pol["adjudication_first"] != true {
		t.Errorf("policy %v", pol)
	}
	var back Manifest
	if err := json.Unmarshal(b.Bytes(), &back); err != nil || back.Split.Ratios.Train != 0.8 || back.Agreement["krippendorff_alpha_ordinal"] != 0.815 || back.Files[0].Rows != 3 {
		t.Errorf("decode back: %+v %v", back, err)
	}
}
