package main

import (
	"context"
	"crypto/sha256"
	"fmt"
	"math/rand/v2"
	"strings"

	"github.com/pertinent/pertinent/store"
)

// The demo's machine source and calibration round, brought in through the same imports a
// lead would use: a grader model that is lenient on the lower grades (so the Sources page has
// something to say) with a confidence per grade, and five anchors of known grade that every
// assessor added to the project later takes before their first pair.

const demoSourceName = "deckhand-grader"

// demoSourcePrompt is the invented prompt whose SHA-256 the source's provenance records.
const demoSourcePrompt = "Rate 0-4 how well this chandlery product answers the customer's search."

func addDemoExtras(ctx context.Context, st *store.Store, c demoCollection) error {
	p, err := st.ProjectByName(ctx, demoProjectName)
	if err != nil {
		return err
	}
	rng := rand.New(rand.NewPCG(demoSeed+3, 13))
	var qrels strings.Builder
	for _, pr := range c.pairs {
		g := pr.truth
		if g <= 2 && rng.IntN(10) < 7 {
			g++ // lenient: a model calls many weak products better than people do
		}
		conf := 0.95 - 0.3*rng.Float64()
		if g == 2 || g == 3 {
			conf -= 0.2 // least sure in the middle of the scale
		}
		fmt.Fprintf(&qrels, "%s 0 %s %d %.2f\n", demoQueries[pr.query].id, c.items[pr.item].doc.ExternalID, g, conf)
	}
	spec := store.ImportSpec{Kind: store.ImportQrels, Source: demoSourceName, SourceKind: store.SourceModel,
		SourceAbout: map[string]string{"model": demoSourceName, "version": "0.4", "date": "2026-11-20",
			"prompt_sha256": fmt.Sprintf("%x", sha256.Sum256([]byte(demoSourcePrompt)))}}
	if _, err := st.Import(ctx, p.ID, 0, spec, []store.ImportFile{{Name: demoSourceName + ".qrels", R: strings.NewReader(qrels.String())}}); err != nil {
		return fmt.Errorf("demo source: %w", err)
	}
	docs := "doc_id,title,body\n" +
		"hl-cal-0,Galley kettle with whistle,A stainless whistling kettle for gas hobs on board. Holds 1.5 litres.\n" +
		"hl-cal-1,Anchor chain 8mm x 30m,Galvanised calibrated chain to pair with an anchor; no anchor included.\n" +
		"hl-cal-2,Folding grapnel anchor 4kg,A small folding grapnel for dinghies and lunch stops; too light to hold a yacht overnight.\n" +
		"hl-cal-3,Claw anchor 7.5kg,A galvanised claw anchor rated for boats up to 7 m; sets quickly in sand and mud.\n" +
		"hl-cal-4,Plough anchor 10kg,A 10 kg galvanised plough anchor rated for cruising yachts of 7 to 9 m; holds well overnight.\n"
	cal := "query_id,doc_id,grade,reason\n" +
		"q01,hl-cal-0,0,\"A kettle: nothing to do with anchoring.\"\n" +
		"q01,hl-cal-1,1,\"Anchoring gear, but the customer asked for the anchor itself.\"\n" +
		"q01,hl-cal-2,2,\"An anchor, but far too light to hold an 8 m yacht overnight.\"\n" +
		"q01,hl-cal-3,3,\"A good anchor of the right kind, a little light and rated for smaller boats.\"\n" +
		"q01,hl-cal-4,4,\"Exactly what was asked: a 10 kg plough rated for the yacht's size.\"\n"
	for _, f := range []struct {
		kind      store.ImportKind
		name, txt string
	}{{store.ImportDocuments, "calibration-documents.csv", docs}, {store.ImportCalibration, "calibration.csv", cal}} {
		if _, err := st.Import(ctx, p.ID, 0, store.ImportSpec{Kind: f.kind}, []store.ImportFile{{Name: f.name, R: strings.NewReader(f.txt)}}); err != nil {
			return fmt.Errorf("demo calibration round: %w", err)
		}
	}
	return nil
}
