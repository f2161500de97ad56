package store

import (
	"bytes"
	"cmp"
	"slices"

	"github.com/pertinent/pertinent/ingest"
)

const (
	featureNames      = `SELECT idx, name FROM feature_names WHERE project_id = ?`
	insertFeatureName = `INSERT INTO feature_names(project_id, idx, name) VALUES (?, ?, ?)`
	findFeatures      = `SELECT data FROM pair_features WHERE pair_id = ?`
	upsertFeatures    = `INSERT INTO pair_features(pair_id, data) VALUES (?, ?)
		ON CONFLICT (pair_id) DO UPDATE SET data = excluded.data`
)

// features stores each pair's features as one blob (ingest.EncodeFeatures), replacing what
// the pair had. CSV features are named by their columns: a name the project knows keeps its
// index, a new name takes the next free one, so files with columns in another order agree.
// SVMlight indexes are stored as they are.
func (im *importer) features(f ImportFile, format ingest.Format) error {
	im.counter("features")
	var remap []uint32 // CSV column i+1 -> project feature index
	var names []string
	fields := tableIDs
	if format == ingest.SVMlight {
		fields = svmlightIDs
	}
	return pipe(im.done, func(emit func(ingest.FeatureRow) error) error {
		return ingest.ReadFeatures(f.R, format, im.options(f.Name), emit)
	}, func(row ingest.FeatureRow) error {
		if row.Names != nil && remap == nil {
			var err error
			if remap, err = im.featureIndexes(row.Names); err != nil {
				return err
			}
			names = row.Names
		}
		qid, did, err := im.lookup(f.Name, row.Line, fields, row.QueryID, row.DocID)
		if err != nil || qid == 0 || did == 0 {
			return err
		}
		pairID, _, err := im.findPair(qid, did)
		if err != nil {
			return err
		}
		if pairID == 0 {
			im.ps.add(f.Name, row.Line, "", "no pair ("+quoteID(row.QueryID)+", "+quoteID(row.DocID)+") in this project: import pairs first")
			return nil
		}
		if im.ps.failed() {
			return nil
		}
		fs := row.Features
		if names != nil {
			for i := range fs {
				fs[i].Index = remap[fs[i].Index-1]
			}
			slices.SortFunc(fs, func(a, b ingest.Feature) int { return cmp.Compare(a.Index, b.Index) })
		}
		return im.storeFeatures(pairID, ingest.EncodeFeatures(fs))
	})
}

func (im *importer) storeFeatures(pairID int64, data []byte) error {
	c := im.counter("features")
	fs, err := im.stmt(findFeatures)
	if err != nil {
		return err
	}
	var old []byte
	had := fs.QueryRowContext(im.ctx, pairID).Scan(&old) == nil
	if !c.tally(had, bytes.Equal(old, data)) {
		return nil
	}
	us, err := im.stmt(upsertFeatures)
	if err != nil {
		return err
	}
	_, err = us.ExecContext(im.ctx, pairID, data)
	return err
}

// featureIndexes maps a CSV file's feature columns to the project's feature indexes,
// adding the names the project does not know yet.
func (im *importer) featureIndexes(names []string) ([]uint32, error) {
	c := im.counter("feature names")
	known := map[string]uint32{}
	var top uint32
	err := eachRow(im.ctx, im.tx, featureNames, func(r rowScanner) error {
		var idx uint32
		var name string
		if err := r.Scan(&idx, &name); err != nil {
			return err
		}
		known[name] = idx
		top = max(top, idx)
		return nil
	}, im.project)
	if err != nil {
		return nil, err
	}
	out := make([]uint32, len(names))
	for i, n := range names {
		if idx, ok := known[n]; ok {
			out[i] = idx
			c.Unchanged++
			continue
		}
		top++
		if _, err := im.tx.ExecContext(im.ctx, insertFeatureName, im.project, top, n); err != nil {
			return nil, err
		}
		known[n] = top
		out[i] = top
		c.New++
	}
	return out, nil
}
