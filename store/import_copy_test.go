package store

import (
	"bytes"
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"math/rand/v2"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/ingest"
)

// rowsModel is what a project should hold after rows imports, kept by the rules of an
// upsert row by row: a query or document is written on the first row naming it in a file
// and changed when it differs; a pair's priority is set, its gold grade only when given.
type rowsModel struct {
	queries map[string][2]string // text, need
	docs    map[string][5]string // title, url, body, body_format, metadata
	pairs   map[[2]string]modelPair
	counts  map[string][3]int // new, updated, unchanged of the import under way
}

type modelPair struct {
	priority, gold int // gold -1: none
	origin         string
}

type modelRow struct {
	q, d           string
	priority, gold int
}

// hostile strings survive any quoting or escaping the wire might do.
var hostile = []string{"plain", "comma, inside", `"quoted"`, "two\nlines", "tab\there", `back\slash`, "ünïcødé ✓", "\\N", ""}

// file writes rows as a rows CSV, with the model's intended query and document fields, and
// applies the rows to the model as the import must.
func (m *rowsModel) file(name string, rows []modelRow, q map[string][2]string, d map[string][5]string) ImportFile {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	w.Write([]string{"query_id", "query_text", "query_need", "doc_id", "title", "url", "body", "body_format", "priority", "gold_grade", "lang"})
	seenQ, seenD := map[string]bool{}, map[string]bool{}
	count := func(what string, k int) {
		c := m.counts[what]
		c[k]++
		m.counts[what] = c
	}
	for _, r := range rows {
		qf, df := q[r.q], d[r.d]
		gold := ""
		if r.gold >= 0 {
			gold = strconv.Itoa(r.gold)
		}
		lang := df[4]
		w.Write([]string{r.q, qf[0], qf[1], r.d, df[0], df[1], df[2], df[3], strconv.Itoa(r.priority), gold, lang})
		if !seenQ[r.q] {
			seenQ[r.q] = true
			old, ok := m.queries[r.q]
			switch {
			case !ok:
				count("queries", 0)
			case old != qf:
				count("queries", 1)
			default:
				count("queries", 2)
			}
			m.queries[r.q] = qf
		}
		if !seenD[r.d] {
			seenD[r.d] = true
			stored := df
			stored[4] = `{"lang":` + strconv.Quote(lang) + `}`
			if lang == "" {
				stored[4] = "{}"
			}
			if stored[3] == "" {
				stored[3] = "text"
			}
			old, ok := m.docs[r.d]
			switch {
			case !ok:
				count("documents", 0)
			case old != stored:
				count("documents", 1)
			default:
				count("documents", 2)
			}
			m.docs[r.d] = stored
		}
		k := [2]string{r.q, r.d}
		old, ok := m.pairs[k]
		switch {
		case !ok:
			count("pairs", 0)
			m.pairs[k] = modelPair{r.priority, r.gold, "rows:" + name}
		case old.priority != r.priority || (r.gold >= 0 && r.gold != old.gold):
			count("pairs", 1)
			old.priority = r.priority
			if r.gold >= 0 {
				old.gold = r.gold
			}
			m.pairs[k] = old
		default:
			count("pairs", 2)
		}
	}
	w.Flush()
	return ImportFile{Name: name, R: bytes.NewReader(buf.Bytes())}
}

// stored reads the project back in the model's shape.
func storedRows(t *testing.T, s *Store, p Project) (map[string][2]string, map[string][5]string, map[[2]string]modelPair) {
	t.Helper()
	qs, ds, ps := map[string][2]string{}, map[string][5]string{}, map[[2]string]modelPair{}
	rows, err := s.r.Query(`SELECT external_id, text, need FROM queries WHERE project_id = ?`, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var id string
		var f [2]string
		rows.Scan(&id, &f[0], &f[1])
		qs[id] = f
	}
	rows.Close()
	rows, err = s.r.Query(`SELECT external_id, title, url, body, body_format, metadata FROM documents WHERE project_id = ?`, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var id string
		var f [5]string
		rows.Scan(&id, &f[0], &f[1], &f[2], &f[3], &f[4])
		ds[id] = f
	}
	rows.Close()
	rows, err = s.r.Query(`SELECT q.external_id, d.external_id, x.priority, COALESCE(x.gold_grade, -1), x.origin
		FROM pairs x JOIN queries q ON q.id = x.query_id JOIN documents d ON d.id = x.document_id WHERE x.project_id = ?`, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var q, d string
		var mp modelPair
		rows.Scan(&q, &d, &mp.priority, &mp.gold, &mp.origin)
		ps[[2]string{q, d}] = mp
	}
	rows.Close()
	return qs, ds, ps
}

// Rows imports, large enough to span the bulk path's batches and, on PostgreSQL, laid in
// from one COPY per file, must leave exactly what importing the rows one at a time by the
// upsert rules would, with the same counts: over five rounds of new, edited, repeated and
// gold-graded rows, two files in one import (the second repeating the first's documents),
// a dry run and a rejected import.
func TestLargeRowsImportsMatchTheirModel(t *testing.T) {
	s := openTest(t)
	p, lead := importProject(t, s)
	// A second project holding the same external ids: nothing may cross between them.
	other, err := s.CreateProject(context.Background(), NewProject{Name: "neighbour"}, lead.ID)
	if err != nil {
		t.Fatal(err)
	}
	mustImport(t, s, other, lead.ID, ImportSpec{Kind: ImportRows}, files("rows.csv", rowsCSV)...)

	rng := rand.New(rand.NewPCG(7, 13))
	m := &rowsModel{queries: map[string][2]string{}, docs: map[string][5]string{}, pairs: map[[2]string]modelPair{}}
	qf, df := map[string][2]string{}, map[string][5]string{}
	pick := func() string { return hostile[rng.IntN(len(hostile))] }
	const nq, nd = 40, 700
	for i := range nq {
		qf[fmt.Sprintf("q%d", i)] = [2]string{fmt.Sprintf("query %d %s", i, pick()), pick()}
	}
	formats := []string{"", "text", "html"}
	for i := range nd {
		df[fmt.Sprintf("d%d", i)] = [5]string{pick(), pick(), fmt.Sprintf("body %d %s", i, pick()), formats[rng.IntN(3)], []string{"", "en", "de"}[rng.IntN(3)]}
	}
	rowsOf := func(n int) []modelRow { return drawRows(rng, nq, nd, n, 5) }
	check := func(round string, rep ImportReport) {
		t.Helper()
		for _, what := range []string{"queries", "documents", "pairs"} {
			c := m.counts[what]
			wantCount(t, rep, what, c[0], c[1], c[2])
		}
		qs, ds, ps := storedRows(t, s, p)
		if !reflect.DeepEqual(qs, m.queries) {
			t.Errorf("%s: queries differ from the model", round)
		}
		if !reflect.DeepEqual(ds, m.docs) {
			for k, v := range m.docs {
				if ds[k] != v {
					t.Errorf("%s: document %s is %q, want %q", round, k, ds[k], v)
					break
				}
			}
			t.Errorf("%s: %d documents stored, %d in the model", round, len(ds), len(m.docs))
		}
		if !reflect.DeepEqual(ps, m.pairs) {
			t.Errorf("%s: %d pairs stored, %d in the model, or their fields differ", round, len(ps), len(m.pairs))
		}
		checkProgress(t, s, round)
	}

	var lastRows []modelRow
	for round := range 5 {
		m.counts = map[string][3]int{}
		rows := rowsOf(600)
		if round > 0 {
			rows = repeatHalf(rng, rows, lastRows)
			// And a few queries and documents change.
			for i := range 3 {
				k := fmt.Sprintf("q%d", rng.IntN(nq))
				qf[k] = [2]string{qf[k][0] + " edited", pick()}
				k = fmt.Sprintf("d%d", rng.IntN(nd))
				f := df[k]
				f[1+i%2] += " edited"
				df[k] = f
			}
		}
		lastRows = rows
		version := projectVersion(t, s, p)
		var fs []ImportFile
		if round == 2 {
			// Two files in one import; the second repeats documents of the first, one of
			// them edited, and adds pairs of its own.
			fs = append(fs, m.file("first.csv", rows, qf, df))
			second := rowsOf(300)
			for i := range second {
				second[i].d = rows[i%len(rows)].d
			}
			second = dedupRows(second)
			k := rows[0].d
			f := df[k]
			f[0] += " again"
			df[k] = f
			fs = append(fs, m.file("second.csv", second, qf, df))
		} else {
			fs = append(fs, m.file(fmt.Sprintf("round%d.csv", round), rows, qf, df))
		}
		rep := mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows}, fs...)
		check(fmt.Sprintf("round %d", round), rep)
		if got := projectVersion(t, s, p); m.counts["pairs"][0] > 0 && got <= version {
			t.Errorf("round %d added pairs but left the project version at %d", round, got)
		}
	}

	// A dry run counts as the import would and writes nothing.
	before := dump(t, s)
	saved := *m
	saved.queries, saved.docs, saved.pairs = clone(m.queries), clone(m.docs), clone(m.pairs)
	m.counts = map[string][3]int{}
	rep := mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows, DryRun: true}, m.file("dry.csv", rowsOf(500), qf, df))
	for _, what := range []string{"queries", "documents", "pairs"} {
		c := m.counts[what]
		wantCount(t, rep, what, c[0], c[1], c[2])
	}
	if after := dump(t, s); !reflect.DeepEqual(before, after) {
		t.Error("a dry run changed the database")
	}
	*m = saved

	// Problems in two files of one import: both files' problems come back and nothing is kept.
	good := m.file("good.csv", rowsOf(400), qf, df)
	bad := func(name string, line int) ImportFile {
		var buf bytes.Buffer
		buf.WriteString("query_id,query_text,doc_id,priority,gold_grade\n")
		for i := 1; i < 300; i++ {
			grade := "1"
			if i+1 == line {
				grade = "9" // off the 0-4 scale
			}
			fmt.Fprintf(&buf, "nq%d,new query,nd%d,0,%s\n", i%7, i, grade)
		}
		return ImportFile{Name: name, R: bytes.NewReader(buf.Bytes())}
	}
	_, err = s.Import(context.Background(), p.ID, lead.ID, ImportSpec{Kind: ImportRows}, []ImportFile{good, bad("a.csv", 120), bad("b.csv", 250)})
	var ps *ingest.Problems
	if !errors.As(err, &ps) {
		t.Fatalf("import with bad grades: %v, want problems", err)
	}
	var where []string
	for _, x := range ps.List {
		where = append(where, x.File+":"+strconv.Itoa(x.Line))
	}
	if !reflect.DeepEqual(where, []string{"a.csv:120", "b.csv:250"}) {
		t.Errorf("problems at %v, want a.csv:120 and b.csv:250", where)
	}
	if after := dump(t, s); !reflect.DeepEqual(before, after) {
		t.Error("a rejected import changed the database")
	}
}

// drawRows makes one file's rows: n pairs of q0..q(nq-1) and d0..d(nd-1) drawn at random,
// none twice, one in goldEvery with a gold grade.
func drawRows(rng *rand.Rand, nq, nd, n, goldEvery int) []modelRow {
	seen := map[[2]string]bool{}
	var out []modelRow
	for len(out) < n {
		r := modelRow{q: fmt.Sprintf("q%d", rng.IntN(nq)), d: fmt.Sprintf("d%d", rng.IntN(nd)), priority: rng.IntN(4), gold: -1}
		if k := [2]string{r.q, r.d}; !seen[k] {
			seen[k] = true
			if rng.IntN(goldEvery) == 0 {
				r.gold = rng.IntN(5)
			}
			out = append(out, r)
		}
	}
	return out
}

// repeatHalf makes the first half of rows repeat the last file's pairs, some with a new
// priority or grade, or an empty grade, which keeps the stored one.
func repeatHalf(rng *rand.Rand, rows, last []modelRow) []modelRow {
	for i := 0; i < len(rows)/2 && i < len(last); i++ {
		r := last[i]
		switch rng.IntN(4) {
		case 0:
			r.priority = rng.IntN(4)
		case 1:
			r.gold = rng.IntN(5)
		case 2:
			r.gold = -1
		}
		rows[i] = r
	}
	return dedupRows(rows)
}

// dedupRows drops the later of two rows naming the same pair.
func dedupRows(rows []modelRow) []modelRow {
	seen := map[[2]string]bool{}
	out := rows[:0]
	for _, r := range rows {
		if k := [2]string{r.q, r.d}; !seen[k] {
			seen[k] = true
			out = append(out, r)
		}
	}
	return out
}

func clone[K comparable, V any](m map[K]V) map[K]V {
	out := make(map[K]V, len(m))
	for k, v := range m {
		out[k] = v
	}
	return out
}

// pairsFile writes rows as a pairs CSV and applies them to the model by a pairs file's
// rule: a new pair is made, a known one gets the priority and, when given, the gold grade.
func (m *rowsModel) pairsFile(name string, rows []modelRow) ImportFile {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	w.Write([]string{"query_id", "doc_id", "priority", "gold_grade"})
	c := m.counts["pairs"]
	for _, r := range rows {
		gold := ""
		if r.gold >= 0 {
			gold = strconv.Itoa(r.gold)
		}
		w.Write([]string{r.q, r.d, strconv.Itoa(r.priority), gold})
		k := [2]string{r.q, r.d}
		old, ok := m.pairs[k]
		switch {
		case !ok:
			c[0]++
			m.pairs[k] = modelPair{r.priority, r.gold, "pairs:" + name}
		case old.priority != r.priority || (r.gold >= 0 && r.gold != old.gold):
			c[1]++
			old.priority = r.priority
			if r.gold >= 0 {
				old.gold = r.gold
			}
			m.pairs[k] = old
		default:
			c[2]++
		}
	}
	m.counts["pairs"] = c
	w.Flush()
	return ImportFile{Name: name, R: bytes.NewReader(buf.Bytes())}
}

// Pairs files, which on PostgreSQL travel by COPY and are checked and laid in by set-based
// statements, must leave what upserting them one at a time would, with the same counts,
// and report the ids the project lacks at their lines, in line order among the reader's own
// problems, capped and then counted.
func TestLargePairsImportsMatchTheirModel(t *testing.T) {
	s := openTest(t)
	p, lead := importProject(t, s)
	other, err := s.CreateProject(context.Background(), NewProject{Name: "neighbour"}, lead.ID)
	if err != nil {
		t.Fatal(err)
	}
	var qs, ds strings.Builder
	qs.WriteString("query_id,text\n")
	ds.WriteString("doc_id,title\n")
	const nq, nd = 30, 500
	for i := range nq {
		fmt.Fprintf(&qs, "q%d,query %d\n", i, i)
	}
	for i := range nd {
		fmt.Fprintf(&ds, "d%d,document %d\n", i, i)
	}
	for _, pr := range []Project{p, other} {
		mustImport(t, s, pr, lead.ID, ImportSpec{Kind: ImportQueries}, files("q.csv", qs.String())...)
		mustImport(t, s, pr, lead.ID, ImportSpec{Kind: ImportDocuments}, files("d.csv", ds.String())...)
	}
	// The neighbour's pairs share every external id; none of them may be touched.
	mustImport(t, s, other, lead.ID, ImportSpec{Kind: ImportPairs}, files("p.csv", "query_id,doc_id,priority,gold_grade\nq1,d1,3,2\nq2,d2,1,\n")...)
	_, _, otherBefore := storedRows(t, s, other)

	m := &rowsModel{pairs: map[[2]string]modelPair{}}
	rng := rand.New(rand.NewPCG(3, 29))
	var last []modelRow
	for round := range 4 {
		m.counts = map[string][3]int{}
		rows := repeatHalf(rng, drawRows(rng, nq, nd, 700, 4), last)
		last = rows
		fs := []ImportFile{m.pairsFile(fmt.Sprintf("round%d.csv", round), rows)}
		if round == 2 {
			// A second file in the same import changes some of the first one's pairs.
			again := append([]modelRow(nil), rows[:200]...)
			for i := range again {
				again[i].priority = (again[i].priority + i%2) % 4
			}
			fs = append(fs, m.pairsFile("again.csv", again))
		}
		rep := mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportPairs}, fs...)
		c := m.counts["pairs"]
		wantCount(t, rep, "pairs", c[0], c[1], c[2])
		if _, _, got := storedRows(t, s, p); !reflect.DeepEqual(got, m.pairs) {
			t.Errorf("round %d: %d pairs stored, %d in the model, or their fields differ", round, len(got), len(m.pairs))
		}
		checkProgress(t, s, fmt.Sprintf("round %d", round))
	}
	if _, _, got := storedRows(t, s, other); !reflect.DeepEqual(got, otherBefore) {
		t.Error("importing into one project changed the neighbour's pairs")
	}

	// Unknown ids on many lines and a grade off the scale on one, in two files, with the
	// problems capped at 2: the list is the first 2 by file and line, the rest counted. A
	// file's rows stop reaching the store at the reader's first problem, so its ids are
	// looked up only before that line.
	before := dump(t, s)
	bad := func(name string, offset int) (ImportFile, []string) {
		var buf bytes.Buffer
		var want []string
		buf.WriteString("query_id,doc_id,priority,gold_grade\n")
		for i := 1; i < 400; i++ {
			line := i + 1
			q, d, grade := fmt.Sprintf("q%d", i%nq), fmt.Sprintf("d%d", i), ""
			checked := i < 100+offset
			if (i+offset)%45 == 0 {
				q = fmt.Sprintf("lost%d", i)
				if checked {
					want = append(want, fmt.Sprintf(`%s:%d: query_id: no query "%s" in this project: import queries first`, name, line, q))
				}
			}
			if (i+offset)%60 == 0 {
				d = fmt.Sprintf("gone%d", i)
				if checked {
					want = append(want, fmt.Sprintf(`%s:%d: doc_id: no document "%s" in this project: import documents first`, name, line, d))
				}
			}
			if i == 100+offset {
				grade = "9"
				want = append(want, fmt.Sprintf("%s:%d: column 4 (gold_grade): grade 9 is outside the scale 0..4", name, line))
			}
			fmt.Fprintf(&buf, "%s,%s,1,%s\n", q, d, grade)
		}
		return ImportFile{Name: name, R: bytes.NewReader(buf.Bytes())}, want
	}
	a, wantA := bad("a.csv", 0)
	b, wantB := bad("b.csv", 7)
	want := append(wantA, wantB...)
	_, err = s.Import(context.Background(), p.ID, lead.ID, ImportSpec{Kind: ImportPairs, MaxProblems: 2}, []ImportFile{a, b})
	var ps *ingest.Problems
	if !errors.As(err, &ps) {
		t.Fatalf("import with unknown ids: %v, want problems", err)
	}
	var got []string
	for _, x := range ps.List {
		got = append(got, x.Error())
	}
	if len(want) != 8 || !reflect.DeepEqual(got, want[:2]) || ps.More != len(want)-2 {
		t.Errorf("problems:\n%s\n... and %d more\nwant:\n%s\n... and %d more", strings.Join(got, "\n"), ps.More,
			strings.Join(want[:2], "\n"), len(want)-2)
	}
	if after := dump(t, s); !reflect.DeepEqual(before, after) {
		t.Error("a rejected import changed the database")
	}
}
