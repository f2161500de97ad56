package store

import (
	"encoding/json"
	"strconv"
	"unicode/utf8"
)

// The bulk path writes documents and pairs through 1-, 2-, 4-, ... 256-row forms of the
// same statement: one execution then carries up to 256 rows, which spares the per-call cost
// of database/sql and the driver (binding, stepping, resetting), a third of the import's
// time when each row is its own statement, and journals each page a statement changes once
// per 256 rows rather than per row (every such statement keeps a statement journal). A
// partly filled buffer (documents are flushed before every batch of pairs that may name
// them) goes out in one statement per set bit of its row count. The SQL stays constant text.
const (
	bulkForms = 9
	bulkRows  = 1 << (bulkForms - 1)
)

// Values every row of a statement shares (project, origin, time) are bound once as ?1..?3:
// they appear in the text before the rows' anonymous parameters, which SQLite then numbers
// from 4 on. That halves the values bound per pair.
const (
	docValues    = `(?, ?, ?, ?, ?, ?)`
	docValues2   = docValues + ", " + docValues
	docValues4   = docValues2 + ", " + docValues2
	docValues8   = docValues4 + ", " + docValues4
	docValues16  = docValues8 + ", " + docValues8
	docValues32  = docValues16 + ", " + docValues16
	docValues64  = docValues32 + ", " + docValues32
	docValues128 = docValues64 + ", " + docValues64
	docValues256 = docValues128 + ", " + docValues128
	docInsert    = `INSERT INTO documents(project_id, external_id, title, url, body, body_format, metadata)
		SELECT ?1, v.column1, v.column2, v.column3, v.column4, v.column5, v.column6 FROM (VALUES `
	docOnConflict = `) AS v WHERE true
		ON CONFLICT (project_id, external_id) DO UPDATE SET title = excluded.title, url = excluded.url,
			body = excluded.body, body_format = excluded.body_format, metadata = excluded.metadata
		WHERE documents.title IS DISTINCT FROM excluded.title OR documents.url IS DISTINCT FROM excluded.url
			OR documents.body IS DISTINCT FROM excluded.body OR documents.body_format IS DISTINCT FROM excluded.body_format
			OR documents.metadata IS DISTINCT FROM excluded.metadata`
	pairValues    = `(?, ?, ?, ?)`
	pairValues2   = pairValues + ", " + pairValues
	pairValues4   = pairValues2 + ", " + pairValues2
	pairValues8   = pairValues4 + ", " + pairValues4
	pairValues16  = pairValues8 + ", " + pairValues8
	pairValues32  = pairValues16 + ", " + pairValues16
	pairValues64  = pairValues32 + ", " + pairValues32
	pairValues128 = pairValues64 + ", " + pairValues64
	pairValues256 = pairValues128 + ", " + pairValues128
	pairInsert    = `INSERT INTO pairs(project_id, query_id, document_id, origin, priority, gold_grade, created_at)
		SELECT ?1, v.column1, (SELECT id FROM documents WHERE project_id = ?1 AND external_id = v.column2), ?2, v.column3, v.column4, ?3
		FROM (VALUES `
	pairOnConflict = `) AS v WHERE true
		ON CONFLICT (project_id, query_id, document_id) DO UPDATE SET priority = excluded.priority,
			gold_grade = COALESCE(excluded.gold_grade, pairs.gold_grade)
		WHERE pairs.priority IS DISTINCT FROM excluded.priority
			OR (excluded.gold_grade IS NOT NULL AND pairs.gold_grade IS DISTINCT FROM excluded.gold_grade)`
)

// upsertDocument writes one document; the Loader uses it too.
const upsertDocument = docInsert + docValues + docOnConflict

// upsertDocuments[k] writes 1<<k documents.
var upsertDocuments = [...]string{
	upsertDocument,
	docInsert + docValues2 + docOnConflict,
	docInsert + docValues4 + docOnConflict,
	docInsert + docValues8 + docOnConflict,
	docInsert + docValues16 + docOnConflict,
	docInsert + docValues32 + docOnConflict,
	docInsert + docValues64 + docOnConflict,
	docInsert + docValues128 + docOnConflict,
	docInsert + docValues256 + docOnConflict,
}

// upsertRowPairs[k] writes 1<<k pairs. Pairs of the bulk path find their document by
// external id inside SQLite, so the import keeps no map of a million document ids.
var upsertRowPairs = [...]string{
	pairInsert + pairValues + pairOnConflict,
	pairInsert + pairValues2 + pairOnConflict,
	pairInsert + pairValues4 + pairOnConflict,
	pairInsert + pairValues8 + pairOnConflict,
	pairInsert + pairValues16 + pairOnConflict,
	pairInsert + pairValues32 + pairOnConflict,
	pairInsert + pairValues64 + pairOnConflict,
	pairInsert + pairValues128 + pairOnConflict,
	pairInsert + pairValues256 + pairOnConflict,
}

// PostgreSQL takes the type of a parameter in a VALUES list from the list alone, where it is
// unknown and so text; the integer columns of the pair rows are cast, in every row, so the
// rows match the table as SQLite's typeless values do. (Documents are all text.)
const (
	postgresRowPairValues    = `(CAST(? AS bigint), ?, CAST(? AS bigint), CAST(? AS bigint))`
	postgresRowPairValues2   = postgresRowPairValues + ", " + postgresRowPairValues
	postgresRowPairValues4   = postgresRowPairValues2 + ", " + postgresRowPairValues2
	postgresRowPairValues8   = postgresRowPairValues4 + ", " + postgresRowPairValues4
	postgresRowPairValues16  = postgresRowPairValues8 + ", " + postgresRowPairValues8
	postgresRowPairValues32  = postgresRowPairValues16 + ", " + postgresRowPairValues16
	postgresRowPairValues64  = postgresRowPairValues32 + ", " + postgresRowPairValues32
	postgresRowPairValues128 = postgresRowPairValues64 + ", " + postgresRowPairValues64
	postgresRowPairValues256 = postgresRowPairValues128 + ", " + postgresRowPairValues128
)

// postgresUpsertRowPairs is upsertRowPairs on PostgreSQL.
var postgresUpsertRowPairs = [...]string{
	pairInsert + postgresRowPairValues + pairOnConflict,
	pairInsert + postgresRowPairValues2 + pairOnConflict,
	pairInsert + postgresRowPairValues4 + pairOnConflict,
	pairInsert + postgresRowPairValues8 + pairOnConflict,
	pairInsert + postgresRowPairValues16 + pairOnConflict,
	pairInsert + postgresRowPairValues32 + pairOnConflict,
	pairInsert + postgresRowPairValues64 + pairOnConflict,
	pairInsert + postgresRowPairValues128 + pairOnConflict,
	pairInsert + postgresRowPairValues256 + pairOnConflict,
}

// bulkForms picks the statement forms of the engine: sqlite's, or postgres's where the
// engine's text differs.
func (im *importer) bulkForms(sqlite, postgres *[bulkForms]string) *[bulkForms]string {
	if im.pg {
		return postgres
	}
	return sqlite
}

// bulk buffers the parameters of up to bulkRows rows of one upsert and counts the rows
// given and the rows SQLite changed (inserted or updated; an upsert that finds the row
// as given changes nothing).
type bulk struct {
	forms          *[bulkForms]string // forms[k] writes 1<<k rows
	width          int
	shared         []any // ?1, ?2, ...: the same for every row
	args           []any // the rows' own values, width per row
	call           []any // shared then one statement's rows
	n              int
	given, changes int
}

func newBulk(forms *[bulkForms]string, shared, width int) *bulk {
	return &bulk{forms: forms, width: width, shared: make([]any, shared), args: make([]any, 0, width*bulkRows)}
}

// add buffers one row; full reports whether the buffer should be flushed.
func (b *bulk) add(args ...any) (full bool) {
	b.args = append(b.args, args...)
	b.n++
	b.given++
	return b.n == bulkRows
}

func (im *importer) flush(b *bulk) error {
	if b.n == 0 {
		return nil
	}
	args := b.args
	for k := len(b.forms) - 1; k >= 0; k-- {
		if b.n&(1<<k) == 0 {
			continue
		}
		w := b.width << k
		if err := im.execCount(b, b.forms[k], args[:w]); err != nil {
			return err
		}
		args = args[w:]
	}
	clear(b.args)
	b.args, b.n = b.args[:0], 0
	return nil
}

func (im *importer) execCount(b *bulk, query string, args []any) error {
	st, err := im.stmt(query)
	if err != nil {
		return err
	}
	b.call = append(append(b.call[:0], b.shared...), args...)
	res, err := st.ExecContext(im.ctx, b.call...)
	clear(b.call)
	if err != nil {
		return err
	}
	n, err := res.RowsAffected()
	b.changes += int(n)
	return err
}

func (im *importer) addDocument(d docArgs) error {
	if im.docs == nil {
		im.docs = newBulk(&upsertDocuments, 1, 6)
		im.docs.shared[0] = im.project
	}
	if im.docs.add(d.id, d.title, d.url, d.body, d.format, d.meta) {
		return im.flush(im.docs)
	}
	return nil
}

// addRowPair buffers a pair whose document is named by external id; the documents
// buffered before it are written first.
func (im *importer) addRowPair(queryID int64, docExt, origin string, prio int, gold any) error {
	if im.rowPairs == nil {
		im.rowPairs = newBulk(im.bulkForms(&upsertRowPairs, &postgresUpsertRowPairs), 3, 4)
	}
	b := im.rowPairs
	b.shared[0], b.shared[1], b.shared[2] = im.project, origin, im.at
	if b.add(queryID, docExt, prio, gold) {
		return im.flushRows()
	}
	return nil
}

// flushRows writes the buffered documents, then the buffered pairs, which may name them.
func (im *importer) flushRows() error {
	for _, b := range [...]*bulk{im.newDocs, im.docs, im.newPairs, im.rowPairs} {
		if b == nil {
			continue
		}
		if err := im.flush(b); err != nil {
			return err
		}
	}
	return nil
}

type docArgs struct {
	id, title, url, body, format, meta string
}

func documentArgs(id, title, url, body, format string, meta map[string]string) (docArgs, error) {
	m := "{}"
	if len(meta) > 0 {
		// JSON would replace bytes that are not UTF-8 without a word; the parsers refuse
		// such input, and so does this for values that come from elsewhere.
		for k, v := range meta {
			if !utf8.ValidString(k) || !utf8.ValidString(v) {
				return docArgs{}, errorf(CodeInvalid, "document "+strconv.Quote(id)+": metadata "+strconv.QuoteToASCII(k)+" is not valid UTF-8")
			}
		}
		b, err := json.Marshal(meta) // keys sorted: equal metadata gives equal text
		if err != nil {
			return docArgs{}, err
		}
		m = string(b)
	}
	return docArgs{id, title, url, body, format, m}, nil
}
