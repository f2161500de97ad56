// Package preference holds the computations on pairwise preference judgments: an assessor
// sees one query and two of its documents and says which is better, that they are about the
// same, or that neither is relevant. From those judgments it chooses which pairs of
// documents to ask about next (Schedule, a merge sort whose comparisons are the questions,
// so a query costs about n log2 n comparisons instead of n²), fits Bradley–Terry strengths
// per query with intervals (FitBradleyTerry), finds intransitive triples, measures how far
// assessors agree (MeasureAgreement, with Krippendorff's alpha from package agreement) and how far
// a run orders documents the way the judgments do (MeasureRunAgreement).
//
// It is pure computation over plain values (no I/O, no SQL). A judgment may present a pair
// in either orientation: every function reads (a, b, left better) and (b, a, right better)
// as the same answer. An assessor's later judgment of a pair replaces an earlier one.
package preference
