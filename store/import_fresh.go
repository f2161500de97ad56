package store

// The first rows file imported into a project without documents or pairs takes a shorter
// path: every document and pair in it is new, so documents are inserted with ids chosen
// here (the largest id before the import plus the document's number in the file, which the
// reader hands over) and pairs name their document by that id. Plain INSERTs: no upsert,
// no lookup of each pair's document by external id. A conflict cannot happen; were one to,
// the INSERT fails and the import rolls back.
const (
	freshDocValues    = `(?, ?, ?, ?, ?, ?, ?)`
	freshDocValues2   = freshDocValues + ", " + freshDocValues
	freshDocValues4   = freshDocValues2 + ", " + freshDocValues2
	freshDocValues8   = freshDocValues4 + ", " + freshDocValues4
	freshDocValues16  = freshDocValues8 + ", " + freshDocValues8
	freshDocValues32  = freshDocValues16 + ", " + freshDocValues16
	freshDocValues64  = freshDocValues32 + ", " + freshDocValues32
	freshDocValues128 = freshDocValues64 + ", " + freshDocValues64
	freshDocValues256 = freshDocValues128 + ", " + freshDocValues128
	freshDocInsert    = `INSERT INTO documents(id, project_id, external_id, title, url, body, body_format, metadata)
		SELECT v.column1, ?1, v.column2, v.column3, v.column4, v.column5, v.column6, v.column7 FROM (VALUES `
	freshPairInsert = `INSERT INTO pairs(project_id, query_id, document_id, origin, priority, gold_grade, created_at)
		SELECT ?1, v.column1, v.column2, ?2, v.column3, v.column4, ?3 FROM (VALUES `
	freshEnd = `) AS v`

	// A project is fresh when it has neither documents nor pairs.
	projectIsFresh = `SELECT NOT EXISTS (SELECT 1 FROM documents WHERE project_id = ?1)
		AND NOT EXISTS (SELECT 1 FROM pairs WHERE project_id = ?1)`
)

// insertDocuments[k] and insertPairs[k] write 1<<k rows.
var insertDocuments = [...]string{
	freshDocInsert + freshDocValues + freshEnd,
	freshDocInsert + freshDocValues2 + freshEnd,
	freshDocInsert + freshDocValues4 + freshEnd,
	freshDocInsert + freshDocValues8 + freshEnd,
	freshDocInsert + freshDocValues16 + freshEnd,
	freshDocInsert + freshDocValues32 + freshEnd,
	freshDocInsert + freshDocValues64 + freshEnd,
	freshDocInsert + freshDocValues128 + freshEnd,
	freshDocInsert + freshDocValues256 + freshEnd,
}

var insertPairs = [...]string{
	freshPairInsert + pairValues + freshEnd,
	freshPairInsert + pairValues2 + freshEnd,
	freshPairInsert + pairValues4 + freshEnd,
	freshPairInsert + pairValues8 + freshEnd,
	freshPairInsert + pairValues16 + freshEnd,
	freshPairInsert + pairValues32 + freshEnd,
	freshPairInsert + pairValues64 + freshEnd,
	freshPairInsert + pairValues128 + freshEnd,
	freshPairInsert + pairValues256 + freshEnd,
}

// The fresh path's integer columns cast for PostgreSQL, as in import_bulk.go.
const (
	postgresFreshDocValues     = `(CAST(? AS bigint), ?, ?, ?, ?, ?, ?)`
	postgresFreshDocValues2    = postgresFreshDocValues + ", " + postgresFreshDocValues
	postgresFreshDocValues4    = postgresFreshDocValues2 + ", " + postgresFreshDocValues2
	postgresFreshDocValues8    = postgresFreshDocValues4 + ", " + postgresFreshDocValues4
	postgresFreshDocValues16   = postgresFreshDocValues8 + ", " + postgresFreshDocValues8
	postgresFreshDocValues32   = postgresFreshDocValues16 + ", " + postgresFreshDocValues16
	postgresFreshDocValues64   = postgresFreshDocValues32 + ", " + postgresFreshDocValues32
	postgresFreshDocValues128  = postgresFreshDocValues64 + ", " + postgresFreshDocValues64
	postgresFreshDocValues256  = postgresFreshDocValues128 + ", " + postgresFreshDocValues128
	postgresFreshPairValues    = `(CAST(? AS bigint), CAST(? AS bigint), CAST(? AS bigint), CAST(? AS bigint))`
	postgresFreshPairValues2   = postgresFreshPairValues + ", " + postgresFreshPairValues
	postgresFreshPairValues4   = postgresFreshPairValues2 + ", " + postgresFreshPairValues2
	postgresFreshPairValues8   = postgresFreshPairValues4 + ", " + postgresFreshPairValues4
	postgresFreshPairValues16  = postgresFreshPairValues8 + ", " + postgresFreshPairValues8
	postgresFreshPairValues32  = postgresFreshPairValues16 + ", " + postgresFreshPairValues16
	postgresFreshPairValues64  = postgresFreshPairValues32 + ", " + postgresFreshPairValues32
	postgresFreshPairValues128 = postgresFreshPairValues64 + ", " + postgresFreshPairValues64
	postgresFreshPairValues256 = postgresFreshPairValues128 + ", " + postgresFreshPairValues128
)

// postgresInsertDocuments and postgresInsertPairs are insertDocuments and insertPairs on PostgreSQL.
var postgresInsertDocuments = [...]string{
	freshDocInsert + postgresFreshDocValues + freshEnd,
	freshDocInsert + postgresFreshDocValues2 + freshEnd,
	freshDocInsert + postgresFreshDocValues4 + freshEnd,
	freshDocInsert + postgresFreshDocValues8 + freshEnd,
	freshDocInsert + postgresFreshDocValues16 + freshEnd,
	freshDocInsert + postgresFreshDocValues32 + freshEnd,
	freshDocInsert + postgresFreshDocValues64 + freshEnd,
	freshDocInsert + postgresFreshDocValues128 + freshEnd,
	freshDocInsert + postgresFreshDocValues256 + freshEnd,
}

var postgresInsertPairs = [...]string{
	freshPairInsert + postgresFreshPairValues + freshEnd,
	freshPairInsert + postgresFreshPairValues2 + freshEnd,
	freshPairInsert + postgresFreshPairValues4 + freshEnd,
	freshPairInsert + postgresFreshPairValues8 + freshEnd,
	freshPairInsert + postgresFreshPairValues16 + freshEnd,
	freshPairInsert + postgresFreshPairValues32 + freshEnd,
	freshPairInsert + postgresFreshPairValues64 + freshEnd,
	freshPairInsert + postgresFreshPairValues128 + freshEnd,
	freshPairInsert + postgresFreshPairValues256 + freshEnd,
}

// freshDocID is the id the fresh path gives the file's document number n (from 0).
func (im *importer) freshDocID(n int) int64 { return im.maxDoc + 1 + int64(n) }

func (im *importer) addFreshDocument(n int, d docArgs) error {
	if im.newDocs == nil {
		im.newDocs = newBulk(im.bulkForms(&insertDocuments, &postgresInsertDocuments), 1, 7)
		im.newDocs.shared[0] = im.project
	}
	if im.newDocs.add(im.freshDocID(n), d.id, d.title, d.url, d.body, d.format, d.meta) {
		return im.flush(im.newDocs)
	}
	return nil
}

func (im *importer) addFreshPair(queryID int64, docNum int, origin string, prio int, gold any) error {
	if im.newPairs == nil {
		im.newPairs = newBulk(im.bulkForms(&insertPairs, &postgresInsertPairs), 3, 4)
	}
	b := im.newPairs
	b.shared[0], b.shared[1], b.shared[2] = im.project, origin, im.at
	if b.add(queryID, im.freshDocID(docNum), prio, gold) {
		return im.flushRows()
	}
	return nil
}
