package main

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"time"

	"github.com/pertinent/pertinent/store"
)

// The demo collection: product search at Harbourline Chandlery, an invented shop for small
// boat owners. Everything here is made up; a fixed seed makes every demo file identical.

const (
	demoProjectName = "Harbourline product search"
	demoSeed        = 20261201
)

var demoPeople = []struct {
	role     store.Role
	username string
	name     string
	bias     float64 // how far this assessor leans above (+) or below (-) the truth
	noise    float64 // how much their grades scatter
}{
	{store.RoleAdmin, "harbourmaster", "Harbour Master", 0, 0},
	{store.RoleLead, "noor", "Noor Castellan", 0, 0},
	{store.RoleAssessor, "tobin", "Tobin Reyes", 0.45, 0.55},
	{store.RoleAssessor, "ilse", "Ilse Varga", 0, 0.45},
	{store.RoleAssessor, "dominic", "Dominic Achterberg", -0.35, 0.85},
}

const demoGuidelines = `# Judging product results for Harbourline

You see what a customer typed into the shop's search box and one product the search offered.
Grade how well that product answers what the customer wants, using the scale beside the buttons.

- Read the **need** under the query: it says what the customer is really after.
- A product of the right kind with the wrong size or rating is *useful* at best, not *exact*.
- Accessories and spare parts for the wanted item are *glancing* unless the customer asked for them.
- Judge the product page as it is; do not search elsewhere.

If a page is broken, in another language, or shows something disturbing or unsafe, do not grade
it: choose **Cannot judge** and the reason. You never have to read on through disturbing content:
flag it and move on, and your lead will deal with it.
`

// demoCategory is a kind of product with the attributes its items vary in.
type demoCategory struct {
	key     string
	noun    string
	related string // a category whose items partly serve the same need
	dims    []demoDim
	blurb   []string // sentences about the kind of product
}

type demoDim struct {
	name   string
	values []string
}

var demoCategories = []demoCategory{
	{"anchor", "anchor", "mooring", []demoDim{
		{"type", []string{"plough", "claw", "folding grapnel", "flat fluke"}},
		{"weight", []string{"2.5 kg", "5 kg", "7.5 kg", "10 kg", "15 kg"}},
		{"finish", []string{"galvanised steel", "stainless steel"}},
	}, []string{"Sets quickly in sand and mud.", "Roll-bar free head stows on most bow rollers.", "Suggested for boats up to the length given in the sizing table."}},
	{"mooring", "mooring line", "fender", []demoDim{
		{"diameter", []string{"10 mm", "12 mm", "14 mm", "16 mm"}},
		{"length", []string{"6 m", "8 m", "10 m", "15 m"}},
		{"construction", []string{"three-strand nylon", "double-braid polyester"}},
	}, []string{"Spliced eye at one end, whipped at the other.", "Stretches to soak up snatch loads in a swell.", "UV-stabilised yarn keeps its strength season after season."}},
	{"lifejacket", "lifejacket", "", []demoDim{
		{"buoyancy", []string{"50N buoyancy aid", "100N foam", "150N automatic inflating", "275N automatic inflating"}},
		{"size", []string{"child", "adult S/M", "adult L/XL"}},
		{"colour", []string{"red", "yellow", "navy"}},
	}, []string{"Crotch strap included.", "Reflective patches and a whistle are fitted.", "Service the inflation head once a year."}},
	{"bilgepump", "bilge pump", "", []demoDim{
		{"drive", []string{"12 V submersible", "24 V submersible", "manual diaphragm"}},
		{"flow", []string{"500 GPH", "1100 GPH", "2000 GPH"}},
		{"switch", []string{"automatic float switch", "no switch"}},
	}, []string{"Fits 19 mm and 25 mm hose.", "Ignition protected for engine spaces.", "Quiet running and easy to clear of debris."}},
	{"navlight", "navigation light", "", []demoDim{
		{"position", []string{"stern", "masthead", "bicolour bow", "all-round anchor"}},
		{"source", []string{"LED", "incandescent"}},
		{"range", []string{"1 nm", "2 nm"}},
	}, []string{"Approved for vessels under 20 metres.", "Sealed housing with a marine-grade cable gland.", "Draws a fraction of an amp."}},
	{"deckshoe", "deck shoe", "", []demoDim{
		{"size", []string{"EU 40", "EU 41", "EU 42", "EU 43", "EU 44", "EU 45"}},
		{"upper", []string{"leather", "canvas"}},
		{"sole", []string{"non-marking siped sole", "cupsole"}},
	}, []string{"Razor-cut grip for wet decks.", "Rawhide laces threaded round the collar.", "Dries quickly after a soaking."}},
	{"battery", "marine battery", "", []demoDim{
		{"chemistry", []string{"LiFePO4 lithium", "AGM", "flooded lead-acid"}},
		{"capacity", []string{"75 Ah", "100 Ah", "120 Ah"}},
		{"use", []string{"deep cycle", "engine starting", "dual purpose"}},
	}, []string{"Vibration-resistant case.", "Ships charged and ready to fit.", "Check your charger profile before fitting."}},
	{"vhf", "VHF radio", "", []demoDim{
		{"form", []string{"handheld", "fixed-mount"}},
		{"sealing", []string{"IPX7 waterproof and floating", "IPX7 waterproof", "splash-proof"}},
		{"calling", []string{"with DSC and GPS", "without DSC"}},
	}, []string{"All international and private channels.", "Dual watch on channel 16.", "A licence is needed to transmit."}},
	{"antifoul", "antifouling paint", "", []demoDim{
		{"kind", []string{"self-polishing ablative", "hard"}},
		{"colour", []string{"navy blue", "black", "red", "white"}},
		{"volume", []string{"750 ml", "2.5 litre", "5 litre"}},
	}, []string{"Suits fibreglass and wooden hulls.", "Two coats recommended on the waterline.", "Not for aluminium outdrives."}},
	{"drybag", "dry bag", "", []demoDim{
		{"volume", []string{"5 litre", "10 litre", "20 litre", "40 litre"}},
		{"closure", []string{"roll-top", "zip"}},
		{"strap", []string{"with shoulder strap", "no strap"}},
	}, []string{"Welded seams keep spray out.", "Floats if dropped overboard.", "Clear window to find things fast."}},
	{"gloves", "sailing gloves", "", []demoDim{
		{"fingers", []string{"full-finger", "short-finger"}},
		{"size", []string{"S", "M", "L", "XL"}},
		{"palm", []string{"synthetic leather palm", "amara palm"}},
	}, []string{"Reinforced where the sheets run.", "Touch-screen friendly fingertips.", "Machine washable."}},
	{"boathook", "boat hook", "mooring", []demoDim{
		{"length", []string{"fixed 1.2 m", "telescopic 1.2–2.1 m", "telescopic 1.6–3.0 m"}},
		{"shaft", []string{"aluminium", "fibreglass"}},
	}, []string{"Floats if dropped.", "Hook and push-off head in one.", "Twist lock holds at any length."}},
	{"binoculars", "binoculars", "", []demoDim{
		{"optics", []string{"7x50", "8x42", "10x50"}},
		{"compass", []string{"with built-in compass", "no compass"}},
		{"body", []string{"waterproof nitrogen-filled", "weather-resistant"}},
	}, []string{"Wide field of view for spotting marks.", "Rubber armour and a floating strap.", "Individual eyepiece focus."}},
	{"fender", "fender", "mooring", []demoDim{
		{"shape", []string{"cylindrical", "round ball", "flat"}},
		{"size", []string{"small (boats to 6 m)", "medium (6–9 m)", "large (9–12 m)"}},
		{"colour", []string{"white", "navy", "black"}},
	}, []string{"Moulded eyes at both ends.", "Inflate to a firm squeeze.", "Non-marking vinyl."}},
}

// demoQuery states what a customer typed, what they want, and which attribute values an
// exact answer has; key names the attribute a near miss must still satisfy.
type demoQuery struct {
	id, text, need string
	category       string
	want           map[string]string
	key            string
}

var demoQueries = []demoQuery{
	{"q01", "10kg anchor for 8m yacht", "Owner of an eight-metre cruising yacht wants a main anchor that holds overnight; plough or claw around 10 kg.", "anchor", map[string]string{"weight": "10 kg", "type": "plough"}, "weight"},
	{"q02", "auto inflating lifejacket 150n", "An adult sailor wants a lifejacket that inflates by itself when they fall in.", "lifejacket", map[string]string{"buoyancy": "150N automatic inflating", "size": "adult S/M"}, "buoyancy"},
	{"q03", "12v bilge pump with float switch", "A motorboat owner wants an electric 12 V pump that switches on by itself when water rises.", "bilgepump", map[string]string{"drive": "12 V submersible", "switch": "automatic float switch", "flow": "1100 GPH"}, "drive"},
	{"q04", "mooring line 12mm 10m", "Someone replacing dock lines on a 7 m boat: 12 mm line, about 10 m long, with stretch.", "mooring", map[string]string{"diameter": "12 mm", "length": "10 m", "construction": "three-strand nylon"}, "diameter"},
	{"q05", "led stern light", "A white stern light, LED for low draw, to replace a broken bulb fitting.", "navlight", map[string]string{"position": "stern", "source": "LED"}, "position"},
	{"q06", "non marking deck shoes 43", "Deck shoes in EU size 43 that will not leave marks on a white deck.", "deckshoe", map[string]string{"size": "EU 43", "sole": "non-marking siped sole"}, "size"},
	{"q07", "lithium leisure battery 100ah", "A deep-cycle lithium battery of about 100 Ah to run lights and fridge at anchor.", "battery", map[string]string{"chemistry": "LiFePO4 lithium", "capacity": "100 Ah", "use": "deep cycle"}, "chemistry"},
	{"q08", "floating handheld vhf dsc", "A handheld radio that floats if dropped and can send a DSC distress call with position.", "vhf", map[string]string{"form": "handheld", "sealing": "IPX7 waterproof and floating", "calling": "with DSC and GPS"}, "form"},
	{"q09", "blue self polishing antifoul", "Navy blue ablative antifouling, enough for a 6 m hull (about 2.5 litres).", "antifoul", map[string]string{"kind": "self-polishing ablative", "colour": "navy blue", "volume": "2.5 litre"}, "kind"},
	{"q10", "20 litre roll top dry bag", "A 20 litre roll-top bag to keep clothes dry in a dinghy.", "drybag", map[string]string{"volume": "20 litre", "closure": "roll-top"}, "volume"},
	{"q11", "full finger sailing gloves L", "Full-finger gloves in size L for handling sheets in cold weather.", "gloves", map[string]string{"fingers": "full-finger", "size": "L"}, "fingers"},
	{"q12", "telescopic boat hook", "A boat hook that extends to reach mooring buoys and collapses for stowage.", "boathook", map[string]string{"length": "telescopic 1.6–3.0 m"}, "length"},
	{"q13", "7x50 binoculars compass", "Marine binoculars, 7x50, with a compass for taking bearings.", "binoculars", map[string]string{"optics": "7x50", "compass": "with built-in compass"}, "optics"},
	{"q14", "large fenders 30ft boat", "Fenders big enough for a boat of about nine to ten metres lying alongside a pontoon.", "fender", map[string]string{"size": "large (9–12 m)", "shape": "cylindrical"}, "size"},
}

var demoBrands = []string{"Saltmarsh", "Keelwright", "Brightwater", "Northsound", "Tidewell", "Gullrock", "Oysterline", "Calder & Vane"}

// demoItem is one product page of the shop.
type demoItem struct {
	doc      store.Document
	category string
	attrs    map[string]string
}

// demoPair is a candidate product for a query with the grade a careful expert would give.
type demoPair struct {
	query int
	item  int
	truth int
}

type demoCollection struct {
	items []demoItem
	pairs []demoPair
}

func buildDemoCollection() demoCollection {
	rng := rand.New(rand.NewPCG(demoSeed, demoSeed^0x9e3779b97f4a7c15))
	var c demoCollection
	byCat := map[string][]int{}
	seen := map[string]bool{}
	for _, cat := range demoCategories {
		for n := 0; n < 26; n++ {
			attrs := map[string]string{}
			for _, d := range cat.dims {
				attrs[d.name] = d.values[rng.IntN(len(d.values))]
			}
			sig := cat.key + fmt.Sprint(attrs)
			if seen[sig] {
				continue
			}
			seen[sig] = true
			byCat[cat.key] = append(byCat[cat.key], len(c.items))
			c.items = append(c.items, makeDemoItem(rng, cat, attrs, len(c.items)))
		}
	}
	catOf := map[string]demoCategory{}
	for _, cat := range demoCategories {
		catOf[cat.key] = cat
	}
	for qi, q := range demoQueries {
		cat := catOf[q.category]
		// Make sure the exact product exists, then draw near misses, related and stray items.
		exact := map[string]string{}
		for _, d := range cat.dims {
			exact[d.name] = d.values[0]
			if v, ok := q.want[d.name]; ok {
				exact[d.name] = v
			}
		}
		sig := cat.key + fmt.Sprint(exact)
		if !seen[sig] {
			seen[sig] = true
			byCat[cat.key] = append(byCat[cat.key], len(c.items))
			c.items = append(c.items, makeDemoItem(rng, cat, exact, len(c.items)))
		}
		// 15 to 22 candidates: mostly the right kind, a few related and stray items, as a
		// real first-stage ranker would return.
		target := 15 + rng.IntN(8)
		chosen := map[int]bool{}
		for _, it := range byCat[cat.key] {
			if demoGrade(q, c.items[it], cat) == 4 {
				chosen[it] = true
			}
		}
		same := append([]int(nil), byCat[cat.key]...)
		rng.Shuffle(len(same), func(i, j int) { same[i], same[j] = same[j], same[i] })
		for _, it := range same {
			if len(chosen) >= target-5 {
				break
			}
			chosen[it] = true
		}
		if cat.related != "" {
			rel := byCat[cat.related]
			for n := 0; n < 3; n++ {
				chosen[rel[rng.IntN(len(rel))]] = true
			}
		}
		for len(chosen) < target {
			other := demoCategories[rng.IntN(len(demoCategories))]
			if other.key != cat.key {
				list := byCat[other.key]
				chosen[list[rng.IntN(len(list))]] = true
			}
		}
		for it := range c.items { // stable order, independent of map iteration
			if chosen[it] {
				c.pairs = append(c.pairs, demoPair{query: qi, item: it, truth: demoGrade(q, c.items[it], cat)})
			}
		}
	}
	return c
}

func makeDemoItem(rng *rand.Rand, cat demoCategory, attrs map[string]string, n int) demoItem {
	brand := demoBrands[rng.IntN(len(demoBrands))]
	var parts []string
	for _, d := range cat.dims {
		parts = append(parts, attrs[d.name])
	}
	title := fmt.Sprintf("%s %s %s", brand, strings.Join(parts, ", "), cat.noun)
	price := 8 + rng.Float64()*240
	var body strings.Builder
	fmt.Fprintf(&body, "The %s %s from %s.", strings.Join(parts, " "), cat.noun, brand)
	for _, i := range rng.Perm(len(cat.blurb))[:2] {
		body.WriteString(" " + cat.blurb[i])
	}
	fmt.Fprintf(&body, "\n\nPrice: £%.2f. In stock at the Harbourline counter and online.", price)
	if rng.IntN(5) == 0 {
		body.WriteString("\n\nCustomers also bought: spare shackles, cable ties, a waterproof marker.")
	}
	doc := store.Document{
		ExternalID: fmt.Sprintf("hl-%04d", 1000+n),
		Title:      title,
		URL:        fmt.Sprintf("https://harbourline.example/p/%s-%d", cat.key, 1000+n),
		Body:       body.String(),
		BodyFormat: "text",
		Metadata:   map[string]string{"category": cat.key, "brand": brand, "price": fmt.Sprintf("%.2f", price)},
	}
	if rng.IntN(6) == 0 { // some pages come as HTML, to show the sanitised rendering
		var li strings.Builder
		for _, d := range cat.dims {
			fmt.Fprintf(&li, "<li><b>%s</b>: %s</li>", d.name, attrs[d.name])
		}
		doc.Body = fmt.Sprintf("<p>%s</p><ul>%s</ul><p>Price: <strong>£%.2f</strong></p>", strings.SplitN(doc.Body, "\n", 2)[0], li.String(), price)
		doc.BodyFormat = "html"
	}
	return demoItem{doc: doc, category: cat.key, attrs: attrs}
}

// demoGrade is the expert's grade: an item of another kind is off target (glancing when it is
// a related kind); of the right kind, it climbs with each wanted attribute it has, and a miss
// on the key attribute keeps it at glancing.
func demoGrade(q demoQuery, it demoItem, cat demoCategory) int {
	if it.category != q.category {
		if it.category == cat.related {
			return 1
		}
		return 0
	}
	if it.attrs[q.key] != q.want[q.key] {
		return 1
	}
	missed := 0
	for k, v := range q.want {
		if it.attrs[k] != v {
			missed++
		}
	}
	switch {
	case missed == 0:
		return 4
	case missed == 1:
		return 3
	default:
		return 2
	}
}

// loadDemoCollection writes the people, the project and the collection, plus a history of
// judgments on the first queries: every assessor on the first eight, some on the next two,
// and the rest left open to judge.
func loadDemoCollection(ctx context.Context, st *store.Store, c demoCollection) error {
	rng := rand.New(rand.NewPCG(demoSeed+1, 7))
	ids := map[string]int64{}
	for _, p := range demoPeople {
		u, err := st.CreateUser(ctx, p.username, p.name, p.role, newPassword())
		if err != nil {
			return err
		}
		ids[p.username] = u.ID
	}
	proj, err := st.CreateProject(ctx, store.NewProject{
		Name:        demoProjectName,
		Description: "Grade how well products answer what customers typed into the Harbourline shop's search box.",
		Guidelines:  demoGuidelines, AllowChanges: true,
	}, ids["harbourmaster"])
	if err != nil {
		return err
	}
	for _, p := range demoPeople {
		if p.role == store.RoleLead || p.role == store.RoleAssessor {
			if err := st.SetMember(ctx, proj.ID, ids[p.username], p.role, ids["harbourmaster"]); err != nil {
				return err
			}
		}
	}
	start := time.Date(2026, 11, 18, 9, 0, 0, 0, time.UTC)
	return st.Load(ctx, proj.ID, func(l *store.Loader) error {
		qids := make([]int64, len(demoQueries))
		for i, q := range demoQueries {
			id, err := l.Query(store.Query{ExternalID: q.id, Text: q.text, Need: q.need})
			if err != nil {
				return err
			}
			qids[i] = id
		}
		dids := map[int]int64{}
		for _, p := range c.pairs {
			if _, ok := dids[p.item]; ok {
				continue
			}
			id, err := l.Document(c.items[p.item].doc)
			if err != nil {
				return err
			}
			dids[p.item] = id
		}
		for n, p := range c.pairs {
			pid, err := l.Pair(store.PairSpec{QueryID: qids[p.query], DocumentID: dids[p.item], Origin: "demo"})
			if err != nil {
				return err
			}
			for ai, a := range demoPeople {
				if a.role != store.RoleAssessor || !demoJudged(p.query, ai, n) {
					continue
				}
				j := store.RecordedJudgment{PairID: pid, UserID: ids[a.username],
					TimeSpentMs: int(4000 + math.Exp(rng.NormFloat64()*0.6+2.4)*1000),
					At:          start.Add(time.Duration(p.query*9+ai)*time.Hour + time.Duration(n)*47*time.Second).Format("2006-01-02T15:04:05.000Z")}
				if rng.IntN(60) == 0 {
					j.CannotJudge = "broken"
					j.Note = "Page shows only a price, no description."
				} else {
					g := int(math.Round(float64(p.truth) + a.bias + rng.NormFloat64()*a.noise))
					g = min(max(g, 0), 4)
					j.Grade = &g
				}
				if err := l.Judgment(j); err != nil {
					return err
				}
			}
		}
		return nil
	})
}

// demoJudged says whether demo assessor ai has judged pair n of query q in the history.
func demoJudged(q, ai, n int) bool {
	switch {
	case q < 8:
		return true
	case q == 8:
		return ai != 4
	case q == 9:
		return ai == 3 && n%2 == 0
	}
	return false
}

// demoRuns are two invented rankers' runs over the demo candidates, kept in the project so that
// Plan judging has something to plan from: "shop-keywords" ranks by the grade with much noise,
// "shop-attributes" with less.
func demoRuns(c demoCollection) map[string]string {
	rng := rand.New(rand.NewPCG(demoSeed+2, 11))
	out := map[string]string{}
	for _, r := range []struct {
		name  string
		noise float64
	}{{"shop-keywords.run", 1.6}, {"shop-attributes.run", 0.7}} {
		var b strings.Builder
		rank := map[int]int{}
		for _, p := range c.pairs {
			rank[p.query]++
			score := float64(p.truth) + rng.NormFloat64()*r.noise
			fmt.Fprintf(&b, "%s Q0 %s %d %.6f %s\n", demoQueries[p.query].id, c.items[p.item].doc.ExternalID, rank[p.query], score, strings.TrimSuffix(r.name, ".run"))
		}
		out[r.name] = b.String()
	}
	return out
}

// keepDemoRuns keeps the demo runs in the demo project.
func keepDemoRuns(ctx context.Context, st *store.Store, c demoCollection) error {
	p, err := st.ProjectByName(ctx, demoProjectName)
	if err != nil {
		return err
	}
	runs := demoRuns(c)
	for _, name := range []string{"shop-attributes.run", "shop-keywords.run"} {
		if _, err := st.KeepRun(ctx, p.ID, 0, name, strings.NewReader(runs[name])); err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
	}
	return nil
}
