package store

import (
	"database/sql"
	"errors"

	"github.com/pertinent/pertinent/ingest"
)

const (
	upsertQuery = `INSERT INTO queries(project_id, external_id, text, need) VALUES (?, ?, ?, ?)
		ON CONFLICT (project_id, external_id) DO UPDATE SET text = excluded.text, need = excluded.need
		WHERE queries.text IS DISTINCT FROM excluded.text OR queries.need IS DISTINCT FROM excluded.need
		RETURNING id`
	findQuery    = `SELECT id FROM queries WHERE project_id = ? AND external_id = ?`
	findDocument = `SELECT id FROM documents WHERE project_id = ? AND external_id = ?`
	// A pairs file sets a pair's priority and, when it gives one, its gold grade; an empty
	// gold grade leaves the pair's as it is, so re-importing candidates never drops gold
	// grades that came from qrels.
	upsertPair = `INSERT INTO pairs(project_id, query_id, document_id, origin, priority, gold_grade, created_at)
		VALUES (?, ?, ?, ?, ?, ?, ?)
		ON CONFLICT (project_id, query_id, document_id) DO UPDATE SET priority = excluded.priority,
			gold_grade = COALESCE(excluded.gold_grade, pairs.gold_grade)
		WHERE pairs.priority IS DISTINCT FROM excluded.priority
			OR (excluded.gold_grade IS NOT NULL AND pairs.gold_grade IS DISTINCT FROM excluded.gold_grade)`
)

func (im *importer) upsertQuery(q ingest.Query) (int64, error) {
	return im.upsertID(im.counter("queries"), im.maxQuery, im.queryIDs, q.ID, upsertQuery, findQuery,
		im.project, q.ID, q.Text, q.Need)
}

func (im *importer) document(d ingest.Document) error {
	args, err := documentArgs(d.ID, d.Title, d.URL, d.Body, d.BodyFormat, d.Meta)
	if err != nil {
		return err
	}
	return im.addDocument(args)
}

func (im *importer) upsertPair(queryID, docID int64, origin string, p ingest.Pair) error {
	st, err := im.stmt(upsertPair)
	if err != nil {
		return err
	}
	var gold any
	if p.GoldGrade != ingest.NoGrade {
		gold = p.GoldGrade
	}
	res, err := st.ExecContext(im.ctx, im.project, queryID, docID, origin, p.Priority, gold, im.at)
	if err != nil {
		return err
	}
	n, err := res.RowsAffected()
	im.pairsGiven++
	im.pairChanges += int(n)
	return err
}

func (im *importer) queries(f ImportFile, format ingest.Format) error {
	im.counter("queries")
	return pipe(im.done, func(emit func(ingest.Query) error) error {
		return ingest.ReadQueries(f.R, format, im.options(f.Name), emit)
	}, func(q ingest.Query) error {
		_, err := im.upsertQuery(q)
		return err
	})
}

func (im *importer) documents(f ImportFile, format ingest.Format) error {
	im.counter("documents")
	err := pipe(im.done, func(emit func(ingest.Document) error) error {
		return ingest.ReadDocuments(f.R, format, im.options(f.Name), emit)
	}, im.document)
	if err != nil {
		return err
	}
	return im.flushRows()
}

// rows is the bulk path: each query and document is written on the first row naming it,
// every row writes its pair.
func (im *importer) rows(f ImportFile, format ingest.Format) error {
	if im.pg {
		return im.copyRows(f, format)
	}
	im.counter("queries")
	im.counter("documents")
	im.counter("pairs")
	origin := "rows:" + f.Name
	// Only the first file: a second may repeat the first one's documents.
	fresh := im.fresh
	im.fresh = false
	// A new document's arguments (its metadata as JSON among them) are made on the
	// reader's goroutine, which has time to spare; the writer's is the busy one.
	type row struct {
		ingest.PairRow
		doc docArgs
	}
	err := pipe(im.done, func(emit func(row) error) error {
		return ingest.ReadPairRows(f.R, format, im.options(f.Name), func(r ingest.PairRow) error {
			x := row{PairRow: r}
			if r.NewDocument {
				d := r.Document
				var err error
				if x.doc, err = documentArgs(d.ID, d.Title, d.URL, d.Body, d.BodyFormat, d.Meta); err != nil {
					return err
				}
			}
			return emit(x)
		})
	}, func(r row) error {
		qid := im.queryIDs[r.Query.ID]
		var err error
		if r.NewQuery || qid == 0 {
			if qid, err = im.upsertQuery(r.Query); err != nil {
				return err
			}
		}
		var gold any
		if r.Pair.GoldGrade != ingest.NoGrade {
			gold = r.Pair.GoldGrade
		}
		if fresh {
			if r.NewDocument {
				if err := im.addFreshDocument(r.DocumentIndex, r.doc); err != nil {
					return err
				}
			}
			return im.addFreshPair(qid, r.DocumentIndex, origin, r.Pair.Priority, gold)
		}
		if r.NewDocument {
			if err := im.addDocument(r.doc); err != nil {
				return err
			}
		}
		return im.addRowPair(qid, r.Document.ID, origin, r.Pair.Priority, gold)
	})
	if err != nil {
		return err
	}
	return im.flushRows()
}

// pairs links queries and documents the project has already; an id it lacks is a problem.
func (im *importer) pairs(f ImportFile, format ingest.Format) error {
	if im.pg {
		return im.copyPairs(f, format)
	}
	im.counter("pairs")
	origin := "pairs:" + f.Name
	return pipe(im.done, func(emit func(ingest.Pair) error) error {
		return ingest.ReadPairs(f.R, format, im.options(f.Name), emit)
	}, func(p ingest.Pair) error {
		qid, did, err := im.lookup(f.Name, p.Line, tableIDs, p.QueryID, p.DocID)
		if err != nil || qid == 0 || did == 0 || im.ps.failed() {
			return err
		}
		return im.upsertPair(qid, did, origin, p)
	})
}

// idFields name where a file keeps the query and document ids, for its problems.
type idFields struct{ query, doc string }

var (
	tableIDs    = idFields{"query_id", "doc_id"}                       // CSV and TSV headers
	runIDs      = idFields{column(1, "query id"), column(3, "doc id")} // qrels columns
	svmlightIDs = idFields{column(2, "qid"), "comment (doc id)"}       // SVMlight's qid: and # comment
)

// lookup finds the ids of a query and a document by external id, reporting a missing one
// as a problem at file:line in the field named by at (ids 0).
func (im *importer) lookup(file string, line int, at idFields, query, doc string) (int64, int64, error) {
	qid, err := im.find(im.queryIDs, findQuery, query)
	if err != nil {
		return 0, 0, err
	}
	if qid == 0 {
		im.ps.add(file, line, at.query, missingQuery(query))
	}
	did, err := im.find(im.docIDs, findDocument, doc)
	if err != nil {
		return 0, 0, err
	}
	if did == 0 {
		im.ps.add(file, line, at.doc, missingDocument(doc))
	}
	return qid, did, nil
}

func missingQuery(id string) string {
	return "no query " + quoteID(id) + " in this project: import queries first"
}

func missingDocument(id string) string {
	return "no document " + quoteID(id) + " in this project: import documents first"
}

// find looks an external id up once per import; 0 means the project lacks it.
func (im *importer) find(cache map[string]int64, query, ext string) (int64, error) {
	if id, ok := cache[ext]; ok {
		return id, nil
	}
	st, err := im.stmt(query)
	if err != nil {
		return 0, err
	}
	var id int64
	err = st.QueryRowContext(im.ctx, im.project, ext).Scan(&id)
	if err != nil && !errors.Is(err, sql.ErrNoRows) {
		return 0, err
	}
	cache[ext] = id
	return id, nil
}

// quoteID shows an id in a problem, cut short.
func quoteID(s string) string {
	if len(s) > 40 {
		r := []rune(s)
		if len(r) > 40 {
			s = string(r[:40]) + "..."
		}
	}
	return `"` + s + `"`
}
