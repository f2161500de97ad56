// Package export writes learning-to-rank training sets in trade formats
// (SVMlight with qid:, qrels, group files, CSV and JSON Lines with full
// detail), splits queries into train/validation/test or folds, applies a
// label policy to one pair's judgments, and describes every export in a
// manifest.
//
// It is pure: it knows nothing of the database or HTTP. Callers stream
// plain Row values, one at a time (RowWriter.Write) or from an iterator
// (WriteAll), in query order.
package export
