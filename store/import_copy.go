package store

import (
	"errors"

	"github.com/jackc/pgx/v5"

	"github.com/pertinent/pertinent/ingest"
)

// On PostgreSQL a rows file is not upserted row by row: its rows travel to the server as one
// COPY stream into a temporary table, and a handful of set-based statements lay them into
// queries, documents and pairs, as a person loading the file by hand would. A statement per
// 256 rows spends most of its time on the round trip, the parameters' encoding and the
// planning of a 1,000-parameter text; COPY has none of that, and the planner joins a million
// rows at once. The result is the upsert's, row for row: queries and documents are written
// on the row first naming them, changed in place when they differ, pairs likewise, and the
// counts of new, updated and unchanged are the same (TestLargeRowsImportsMatchTheirModel).
const (
	// ON COMMIT DROP: the table lives no longer than the import's transaction; a second file
	// of the same import finds it there and empties it. Fields a row does not write (a known
	// query's text, a known document's body) travel as NULL.
	postgresImportRowsTable = `CREATE TEMP TABLE IF NOT EXISTS import_rows (n bigint, query_ext text, query_text text,
		query_need text, new_query boolean, doc_ext text, title text, url text, body text, body_format text,
		metadata text, new_doc boolean, priority bigint, gold bigint) ON COMMIT DROP`
	postgresEmptyImportRows = `TRUNCATE import_rows`
	// A temporary table has no statistics until it is analysed; without them the planner
	// expects a thousand rows and loops where it should hash.
	postgresAnalyzeImportRows = `ANALYZE import_rows`

	postgresUpdateImportedQueries = `UPDATE queries q SET text = r.query_text, need = r.query_need
		FROM import_rows r
		WHERE r.new_query AND q.project_id = ?1 AND q.external_id = r.query_ext
			AND (q.text IS DISTINCT FROM r.query_text OR q.need IS DISTINCT FROM r.query_need)`
	postgresInsertImportedQueries = `INSERT INTO queries(project_id, external_id, text, need)
		SELECT ?1, r.query_ext, r.query_text, r.query_need FROM import_rows r
		WHERE r.new_query AND NOT EXISTS (SELECT 1 FROM queries q WHERE q.project_id = ?1 AND q.external_id = r.query_ext)
		ORDER BY r.n`

	postgresUpdateImportedDocuments = `UPDATE documents d SET title = r.title, url = r.url, body = r.body,
			body_format = r.body_format, metadata = r.metadata
		FROM import_rows r
		WHERE r.new_doc AND d.project_id = ?1 AND d.external_id = r.doc_ext
			AND (d.title IS DISTINCT FROM r.title OR d.url IS DISTINCT FROM r.url OR d.body IS DISTINCT FROM r.body
				OR d.body_format IS DISTINCT FROM r.body_format OR d.metadata IS DISTINCT FROM r.metadata)`
	postgresInsertImportedDocuments = `INSERT INTO documents(project_id, external_id, title, url, body, body_format, metadata)
		SELECT ?1, r.doc_ext, r.title, r.url, r.body, r.body_format, r.metadata FROM import_rows r
		WHERE r.new_doc AND NOT EXISTS (SELECT 1 FROM documents d WHERE d.project_id = ?1 AND d.external_id = r.doc_ext)
		ORDER BY r.n`

	// A pairs file's rule (import_tables.go): the priority is set, a gold grade only when given.
	postgresUpdateImportedPairs = `UPDATE pairs p SET priority = r.priority, gold_grade = COALESCE(r.gold, p.gold_grade)
		FROM import_rows r
		JOIN queries q ON q.project_id = ?1 AND q.external_id = r.query_ext
		JOIN documents d ON d.project_id = ?1 AND d.external_id = r.doc_ext
		WHERE p.project_id = ?1 AND p.query_id = q.id AND p.document_id = d.id
			AND (p.priority IS DISTINCT FROM r.priority OR (r.gold IS NOT NULL AND p.gold_grade IS DISTINCT FROM r.gold))`
	postgresInsertImportedPairs = `INSERT INTO pairs(project_id, query_id, document_id, origin, priority, gold_grade, created_at)
		SELECT ?1, q.id, d.id, ?2, r.priority, r.gold, ?3
		FROM import_rows r
		JOIN queries q ON q.project_id = ?1 AND q.external_id = r.query_ext
		JOIN documents d ON d.project_id = ?1 AND d.external_id = r.doc_ext
		WHERE NOT EXISTS (SELECT 1 FROM pairs p WHERE p.project_id = ?1 AND p.query_id = q.id AND p.document_id = d.id)
		ORDER BY r.n`
	projectHasPairs = `SELECT EXISTS (SELECT 1 FROM pairs WHERE project_id = ?1)`

	// A pairs file's ids that the project lacks, in line order, at most ?2 rows, each with
	// the number of missing ids in the whole file (a window sum, taken before the LIMIT).
	postgresMissingImportedIDs = `SELECT r.n, r.query_ext, r.doc_ext, q.id IS NULL, d.id IS NULL,
			SUM(CAST(q.id IS NULL AS int) + CAST(d.id IS NULL AS int)) OVER ()
		FROM import_rows r
		LEFT JOIN queries q ON q.project_id = ?1 AND q.external_id = r.query_ext
		LEFT JOIN documents d ON d.project_id = ?1 AND d.external_id = r.doc_ext
		WHERE q.id IS NULL OR d.id IS NULL
		ORDER BY r.n LIMIT ?2`
)

// importRowsColumns are import_rows' columns in the order copyRows sends them.
var importRowsColumns = []string{"n", "query_ext", "query_text", "query_need", "new_query", "doc_ext",
	"title", "url", "body", "body_format", "metadata", "new_doc", "priority", "gold"}

// copyRows is rows on PostgreSQL.
func (im *importer) copyRows(f ImportFile, format ingest.Format) error {
	qc, dc := im.counter("queries"), im.counter("documents")
	im.counter("pairs")
	// The reader's goroutine makes each row's values (a new document's metadata as JSON
	// among them) and counts the rows that write a query or a document; copyImportRows has
	// waited for it to end before they are read.
	var queries, docs int
	sent, readErr, err := im.copyImportRows(func(emit func([]any) error) error {
		n := int64(0)
		return ingest.ReadPairRows(f.R, format, im.options(f.Name), func(r ingest.PairRow) error {
			n++
			row := make([]any, len(importRowsColumns))
			row[0], row[1], row[4], row[5], row[11] = n, r.Query.ID, r.NewQuery, r.Document.ID, r.NewDocument
			if r.NewQuery {
				row[2], row[3] = r.Query.Text, r.Query.Need
				queries++
			}
			if r.NewDocument {
				d := r.Document
				a, err := documentArgs(d.ID, d.Title, d.URL, d.Body, d.BodyFormat, d.Meta)
				if err != nil {
					return err
				}
				row[6], row[7], row[8], row[9], row[10] = a.title, a.url, a.body, a.format, a.meta
				docs++
			}
			pairFields(row, r.Pair)
			return emit(row)
		})
	})
	if err != nil {
		return err
	}
	// Problems in the file: nothing is laid in (the import will roll back), but the
	// transaction stays usable, so the next file's problems are found too.
	if readErr != nil || im.ps.failed() || sent == 0 {
		return readErr
	}
	if err := im.layIn(qc, queries, postgresUpdateImportedQueries, postgresInsertImportedQueries); err != nil {
		return err
	}
	if err := im.layIn(dc, docs, postgresUpdateImportedDocuments, postgresInsertImportedDocuments); err != nil {
		return err
	}
	return im.layInPairs("rows:"+f.Name, sent)
}

// copyPairs is pairs on PostgreSQL: the file's pairs travel by COPY with the line each
// starts on as n, the ids the project lacks are found in one statement and reported at
// their lines as lookup reports them, and the rest is laid in as a rows file's pairs are.
func (im *importer) copyPairs(f ImportFile, format ingest.Format) error {
	im.counter("pairs")
	sent, readErr, err := im.copyImportRows(func(emit func([]any) error) error {
		return ingest.ReadPairs(f.R, format, im.options(f.Name), func(p ingest.Pair) error {
			row := make([]any, len(importRowsColumns))
			row[0], row[1], row[4], row[5], row[11] = int64(p.Line), p.QueryID, false, p.DocID, false
			pairFields(row, p)
			return emit(row)
		})
	})
	if err != nil {
		return err
	}
	var problems *ingest.Problems
	if readErr != nil && !errors.As(readErr, &problems) {
		return readErr
	}
	if sent == 0 {
		return readErr
	}
	if err := im.reportMissingIDs(f.Name, tableIDs); err != nil {
		return err
	}
	if readErr != nil || im.ps.failed() {
		return readErr
	}
	return im.layInPairs("pairs:"+f.Name, sent)
}

// pairFields sets a row's priority and gold grade (NULL when the file gives none).
func pairFields(row []any, p ingest.Pair) {
	row[12] = int64(p.Priority)
	if p.GoldGrade != ingest.NoGrade {
		row[13] = int64(p.GoldGrade)
	}
}

// copyImportRows empties import_rows (creating it the first time in this transaction) and
// fills it with what read emits, by COPY on the transaction's own connection: rows are
// made on a reader goroutine while the stream sends the earlier ones. sent is the number
// of rows sent; readErr is the reader's error (its problems with the file, among others),
// err one of the database, and the reader has ended when it returns. The table is analysed
// once filled.
func (im *importer) copyImportRows(read func(emit func([]any) error) error) (sent int64, readErr, err error) {
	if _, err := im.execRows(postgresImportRowsTable); err != nil {
		return 0, nil, err
	}
	if _, err := im.execRows(postgresEmptyImportRows); err != nil {
		return 0, nil, err
	}
	p := pull(im.done, read)
	err = im.conn.Raw(func(driverConn any) error {
		c, ok := driverConn.(pgConn)
		if !ok {
			return errors.New("store: COPY needs a PostgreSQL connection")
		}
		src := pgx.CopyFromFunc(func() ([]any, error) {
			row, ok, err := p.next()
			if !ok || err != nil {
				return nil, err
			}
			return row, nil
		})
		var err error
		sent, err = pgxConn(c).CopyFrom(im.ctx, pgx.Identifier{"import_rows"}, importRowsColumns, src)
		return err
	})
	readErr = p.close()
	if err != nil || sent == 0 {
		return sent, readErr, err
	}
	_, err = im.execRows(postgresAnalyzeImportRows)
	return sent, readErr, err
}

// reportMissingIDs adds a problem for each query and document id in import_rows that the
// project lacks, at the row's line, in line order and up to the cap; the ones past the
// cap are counted.
func (im *importer) reportMissingIDs(file string, at idFields) error {
	rows, err := im.tx.QueryContext(im.ctx, postgresMissingImportedIDs, im.project, im.ps.max)
	if err != nil {
		return err
	}
	defer rows.Close()
	total, added := 0, 0
	for rows.Next() {
		var line int
		var query, doc string
		var noQuery, noDoc bool
		if err := rows.Scan(&line, &query, &doc, &noQuery, &noDoc, &total); err != nil {
			return err
		}
		if noQuery {
			im.ps.add(file, line, at.query, missingQuery(query))
			added++
		}
		if noDoc {
			im.ps.add(file, line, at.doc, missingDocument(doc))
			added++
		}
	}
	if err := rows.Err(); err != nil {
		return err
	}
	im.ps.fileMore += total - added
	return nil
}

// layInPairs updates and inserts the pairs of import_rows, counting them as finish
// expects: given, changed (updated or new), and the number above maxPair. A project
// without pairs has none to update.
func (im *importer) layInPairs(origin string, sent int64) error {
	var had bool
	if err := im.tx.QueryRowContext(im.ctx, projectHasPairs, im.project).Scan(&had); err != nil {
		return err
	}
	if had {
		n, err := im.execRows(postgresUpdateImportedPairs, im.project)
		if err != nil {
			return err
		}
		im.pairChanges += n
	}
	n, err := im.execRows(postgresInsertImportedPairs, im.project, origin, im.at)
	if err != nil {
		return err
	}
	im.pairsGiven += int(sent)
	im.pairChanges += n
	return nil
}

// layIn updates the given rows that differ from the project's, inserts the missing ones,
// and counts: given is how many rows wrote this kind.
func (im *importer) layIn(c *ImportCount, given int, update, insert string) error {
	updated, err := im.execRows(update, im.project)
	if err != nil {
		return err
	}
	added, err := im.execRows(insert, im.project)
	if err != nil {
		return err
	}
	c.New += added
	c.Updated += updated
	c.Unchanged += given - added - updated
	return nil
}

func (im *importer) execRows(query string, args ...any) (int, error) {
	res, err := im.tx.ExecContext(im.ctx, query, args...)
	if err != nil {
		return 0, err
	}
	n, err := res.RowsAffected()
	return int(n), err
}

// pgxConn is the pgx connection under the store's driver connection.
func pgxConn(c pgConn) *pgx.Conn { return c.Conn.Conn() }
