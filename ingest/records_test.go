package ingest

import (
	"errors"
	"strings"
	"testing"
)

func queries(t *testing.T, f Format, src string) ([]Query, error) {
	return all(t, src, func(r *strings.Reader, fn func(Query) error) error {
		return ReadQueries(r, f, Options{File: "q." + strings.ToLower(f.String())}, fn)
	})
}

func docs(t *testing.T, f Format, src string) ([]Document, error) {
	return all(t, src, func(r *strings.Reader, fn func(Document) error) error {
		return ReadDocuments(r, f, Options{File: "d"}, fn)
	})
}

func pairs(t *testing.T, f Format, src string) ([]Pair, error) {
	return all(t, src, func(r *strings.Reader, fn func(Pair) error) error {
		return ReadPairs(r, f, Options{File: "p", Scale: 3}, fn)
	})
}

func TestQueriesCSV(t *testing.T) {
	// Columns in any order, a BOM, CRLF line ends, quoted commas and line breaks.
	src := "\xef\xbb\xbfneed,query_id,text\r\n" +
		"\"find, compare\",q1,cheap flights\r\n" +
		"\r\n" +
		",q2,\"two\nlines \"\"quoted\"\"\"\r\n"
	got, err := queries(t, CSV, src)
	wantRead(t, got, err, []Query{
		{ID: "q1", Text: "cheap flights", Need: "find, compare", Line: 2},
		{ID: "q2", Text: "two\nlines \"quoted\"", Line: 4},
	})
}

func TestQueriesCSVProblems(t *testing.T) {
	src := "query_id,text\n" +
		"q1,one\n" + // 2
		"q 2,two\n" + // 3
		"q3,\n" + // 4
		"q1,again\n" + // 5
		"q4,bell\a\n" + // 6
		"q5,a,b\n" + // 7
		"q6,ab\"c\n" + // 8
		"q7,\"x\"y\n" + // 9
		"q8,\xff\n" + // 10
		"q\u200b9,nine\n" // 11
	_, err := queries(t, CSV, src)
	wantProblems(t, err,
		`q.csv:3: column 1 (query_id): "q 2" contains whitespace (ids must be one token)`,
		`q.csv:4: column 2 (text): is empty`,
		`q.csv:5: column 1 (query_id): duplicate query id "q1" (first at line 2)`,
		`q.csv:6: column 2 (text): contains control character U+0007 at byte 5`,
		`q.csv:7: 3 fields, but the header has 2`,
		`q.csv:8: field 2: quote inside an unquoted field (quote the whole field and double inner quotes)`,
		`q.csv:9: field 2: unexpected 'y' after closing quote`,
		`q.csv:10: column 2 (text): is not valid UTF-8 at byte 1`,
		`q.csv:11: column 1 (query_id): "q\u200b9" contains invisible character U+200B`,
	)
}

func TestQueriesCSVHeaderProblems(t *testing.T) {
	_, err := queries(t, CSV, "query_id,txt,query_id,\nq1,a,b,c\n")
	wantProblems(t, err,
		`q.csv:1: column 2: unknown column "txt" (known: query_id, text, need)`,
		`q.csv:1: column 3: "query_id" repeats column 1`,
		`q.csv:1: column 4: has no name`,
		`q.csv:1: missing column "text"`,
	)
	_, err = queries(t, CSV, "")
	wantProblems(t, err, `q.csv: empty file: a header row naming the columns is required`)
	_, err = queries(t, CSV, "query_id,text\nq1,\"open\n")
	wantProblems(t, err, `q.csv:2: quoted field is not closed before the end of the file`)
}

func TestQueriesJSONL(t *testing.T) {
	src := `{"query_id":"q1","text":"<b>bold</b> & <script>alert(1)</script>","need":"x"}` + "\n" +
		"\n" +
		`{"query_id":301,"text":"numeric id","need":null}` + "\n"
	got, err := queries(t, JSONL, src)
	// Markup is data here; the renderer escapes it.
	wantRead(t, got, err, []Query{
		{ID: "q1", Text: "<b>bold</b> & <script>alert(1)</script>", Need: "x", Line: 1},
		{ID: "301", Text: "numeric id", Line: 3},
	})
}

func TestQueriesJSONLProblems(t *testing.T) {
	src := `{"query_id":"q1","text":"a"}` + "\n" +
		`{"query_id":"q2"}` + "\n" +
		`{"query_id":"q3","text":"a","extra":1}` + "\n" +
		`["q4"]` + "\n" +
		`{"query_id":["q5"],"text":"a"}` + "\n" +
		`{"query_id":"q6","text":"nul \u0000"}` + "\n" +
		`{"query_id":"q1","text":"b"}` + "\n" +
		"{\"query_id\":\"q8\",\"text\":\"\xc3\"}\n" +
		`{"query_id":"q9","text":"a"` + "\n"
	_, err := queries(t, JSONL, src)
	wantProblems(t, err,
		`q.jsonl:2: field "text": is missing`,
		`q.jsonl:3: field "extra": unknown field (known: query_id, text, need)`,
		`q.jsonl:4: is not a JSON object: json: cannot unmarshal array into Go value of type map[string]json.RawMessage`,
		`q.jsonl:5: field "query_id": must be a string, number or boolean`,
		`q.jsonl:6: field "text": contains control character U+0000 at byte 5`,
		`q.jsonl:7: field "query_id": duplicate query id "q1" (first at line 1)`,
		`q.jsonl:8: is not valid UTF-8 at byte 26`,
		`q.jsonl:9: is not a JSON object: unexpected end of JSON input`,
	)
}

func TestDocumentsCSV(t *testing.T) {
	src := "doc_id,title,lang,body,url,body_format,site\n" +
		"d1,<i>Title</i>,en,\"<p onclick=\"\"x()\"\">Body\ttext</p>\",http://e.x/1,html,\n" +
		"d2,Plain,,just text,,,shop\n"
	got, err := docs(t, CSV, src)
	wantRead(t, got, err, []Document{
		{ID: "d1", Title: "<i>Title</i>", URL: "http://e.x/1", Body: "<p onclick=\"x()\">Body\ttext</p>", BodyFormat: "html", Meta: map[string]string{"lang": "en"}, Line: 2},
		{ID: "d2", Title: "Plain", Body: "just text", BodyFormat: "text", Meta: map[string]string{"site": "shop"}, Line: 3},
	})
}

func TestDocumentsProblems(t *testing.T) {
	_, err := docs(t, CSV, "doc_id,body_format,note\nd1,markdown,ok\nd2,text,\"bad\x01\"\nd1,,\n")
	wantProblems(t, err,
		`d:2: column 2 (body_format): "markdown" is not one of text, html`,
		`d:3: column 3 (note): contains control character U+0001 at byte 4`,
	)
	// d1 on line 2 was rejected, so line 4 is its first valid row.
	_, err = docs(t, CSV, "doc_id\nd1\nd1\n")
	wantProblems(t, err, `d:3: column 1 (doc_id): duplicate document id "d1" (first at line 2)`)
}

func TestDocumentsJSONL(t *testing.T) {
	src := `{"doc_id":"d1","title":"T","body":"B","meta":{"lang":"en","year":2020,"paid":false}}` + "\n" +
		`{"doc_id":"d2","meta":{"x":null,"y":{}}}` + "\n"
	got, err := docs(t, JSONL, src)
	wantProblems(t, err,
		`d:2: field "meta.x": is null`,
		`d:2: field "meta.y": must be a string, number or boolean`,
	)
	mustEqual(t, got, []Document{
		{ID: "d1", Title: "T", Body: "B", BodyFormat: "text", Meta: map[string]string{"lang": "en", "year": "2020", "paid": "false"}, Line: 1},
	})
}

func TestPairs(t *testing.T) {
	got, err := pairs(t, CSV, "doc_id,query_id,gold_grade,priority\nd1,q1,,\nd2,q1,2,-3\n")
	wantRead(t, got, err, []Pair{
		{QueryID: "q1", DocID: "d1", GoldGrade: NoGrade, Line: 2},
		{QueryID: "q1", DocID: "d2", GoldGrade: 2, Priority: -3, Line: 3},
	})
	_, err = pairs(t, CSV, "query_id,doc_id,gold_grade,priority,lang\n")
	wantProblems(t, err, `p:1: column 5: unknown column "lang" (known: query_id, doc_id, priority, gold_grade)`)
	_, err = pairs(t, CSV, "query_id,doc_id,gold_grade,priority\nq1,d1,3,\nq1,d2,x,1.5\nq1,d3,,\nq1,d3,,\n")
	wantProblems(t, err,
		`p:2: column 3 (gold_grade): grade 3 is outside the scale 0..2`,
		`p:3: column 4 (priority): "1.5" is not an integer`,
		`p:3: column 3 (gold_grade): "x" is not an integer`,
		`p:5: duplicate pair ("q1", "d3") (first at line 4)`,
	)
	got, err = pairs(t, JSONL, `{"query_id":"q1","doc_id":"d1","priority":"7","gold_grade":0}`+"\n")
	wantRead(t, got, err, []Pair{{QueryID: "q1", DocID: "d1", Priority: 7, GoldGrade: 0, Line: 1}})
}

func TestPairRows(t *testing.T) {
	src := "query_id,query_text,doc_id,title,body,lang,priority\n" +
		"q1,flights,d1,A,a body,en,2\n" +
		"q1,flights,d2,B,b body,,\n" +
		"q2,hotels,d1,A,a body,en,\n"
	var got []PairRow
	err := ReadPairRows(strings.NewReader(src), CSV, Options{}, func(r PairRow) error {
		got = append(got, r)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != 3 {
		t.Fatalf("%d rows", len(got))
	}
	mustEqual(t, got[0], PairRow{
		Query:       Query{ID: "q1", Text: "flights", Line: 2},
		Document:    Document{ID: "d1", Title: "A", Body: "a body", BodyFormat: "text", Meta: map[string]string{"lang": "en"}, Line: 2},
		Pair:        Pair{QueryID: "q1", DocID: "d1", Priority: 2, GoldGrade: NoGrade, Line: 2},
		NewQuery:    true,
		NewDocument: true,
	})
	news := func(r PairRow) [2]bool { return [2]bool{r.NewQuery, r.NewDocument} }
	mustEqual(t, news(got[1]), [2]bool{false, true})
	mustEqual(t, news(got[2]), [2]bool{true, false})
	// d1 is the file's first document, d2 its second, wherever they recur.
	mustEqual(t, []int{got[0].DocumentIndex, got[1].DocumentIndex, got[2].DocumentIndex}, []int{0, 1, 0})

	bad := "query_id,query_text,doc_id,title,body\n" +
		"q1,flights,d1,A,a\n" +
		"q1,flights,d1,A,a\n" +
		"q1,trains,d2,B,b\n" +
		"q2,hotels,d1,A,changed\n" +
		"q3,,d3,\x7f,c\n"
	err = ReadPairRows(strings.NewReader(bad), CSV, Options{File: "rows.csv"}, nil)
	wantProblems(t, err,
		`rows.csv:3: duplicate pair ("q1", "d1") (first at line 2)`,
		`rows.csv:4: query "q1" differs from its row at line 2 (text or need)`,
		`rows.csv:5: document "d1" differs from its row at line 2 (title, url, body, body_format or metadata)`,
		`rows.csv:6: column 2 (query_text): is empty`,
		`rows.csv:6: column 4 (title): contains control character U+007F at byte 1`,
	)
}

func TestCallbackStopsAtFirstProblem(t *testing.T) {
	src := "query_id,text\nq1,a\nq2,\nq3,c\n"
	got, err := queries(t, CSV, src)
	wantProblems(t, err, `q.csv:3: column 2 (text): is empty`)
	// q3 is valid but comes after a problem: it is checked, not handed over.
	mustEqual(t, len(got), 1)

	stop := errors.New("stop")
	err = ReadQueries(strings.NewReader(src), CSV, Options{}, func(Query) error { return stop })
	if err != stop {
		t.Fatalf("err = %v, want the callback's error", err)
	}
}

func TestProblemLimit(t *testing.T) {
	var b strings.Builder
	b.WriteString("query_id,text\n")
	for range 25 {
		b.WriteString("q,\n")
	}
	err := ReadQueries(strings.NewReader(b.String()), CSV, Options{File: "q.csv", MaxProblems: 3}, nil)
	var ps *Problems
	if !errors.As(err, &ps) {
		t.Fatal(err)
	}
	mustEqual(t, len(ps.List), 3)
	// 25 empty texts; rejected rows never count as duplicate ids.
	mustEqual(t, ps.More, 22)
	want := "q.csv:2: column 2 (text): is empty\nq.csv:3: column 2 (text): is empty\nq.csv:4: column 2 (text): is empty\n... and 22 more problems"
	mustEqual(t, err.Error(), want)
}

func TestOverlongLines(t *testing.T) {
	long := strings.Repeat("x", 100)
	_, err := queries(t, JSONL, "")
	if err != nil {
		t.Fatal(err)
	}
	src := `{"query_id":"q1","text":"` + long + `"}` + "\n" + `{"query_id":"q2","text":"y"}` + "\n"
	var got []Query
	err = ReadQueries(strings.NewReader(src), JSONL, Options{File: "q", MaxLineBytes: 64}, func(q Query) error {
		got = append(got, q)
		return nil
	})
	wantProblems(t, err, `q:1: line longer than 64 bytes`)
	err = ReadQueries(strings.NewReader("query_id,text\nq1,\""+long+"\"\nq2,y\n"), CSV, Options{File: "q", MaxLineBytes: 64}, nil)
	wantProblems(t, err, `q:2: row longer than 64 bytes; reading stopped here`)
	// Many short lines inside one quoted field still count as one row.
	err = ReadQueries(strings.NewReader("query_id,text\nq1,\""+strings.Repeat("ab\n", 40)+"\"\n"), CSV, Options{File: "q", MaxLineBytes: 64}, nil)
	wantProblems(t, err, `q:2: row longer than 64 bytes; reading stopped here`)
	// Lines longer than the read buffer are skipped without being held.
	huge := strings.Repeat("z", 3*readBufSize)
	err = ReadRun(strings.NewReader("q1 Q0 "+huge+" 1 1 r\nq1 Q0 d2 2 0.5 r\n"), Options{File: "run", MaxLineBytes: readBufSize}, nil)
	wantProblems(t, err, `run:1: line longer than 65536 bytes`)
}
