// Package rankeval scores rankings against qrels (NDCG with exponential or
// linear gain, ERR, precision, average precision, judged share) and
// compares two runs query by query with a paired randomisation test and a
// paired t-test. It stands apart from the fixed packages because ranking
// metrics fit none of them.
//
// Conventions, all stated here once:
//   - A run's documents are ranked by score, highest first; equal scores
//     are broken by document id in descending byte order, so a ranking
//     never depends on input order.
//   - Documents without a final grade in the qrels count as not relevant
//     (common practice).
//   - Every query of the qrels is evaluated; one missing from the run
//     scores 0. Queries of the run that are not in the qrels are ignored
//     and counted.
//   - NDCG is undefined for a query without any document graded above 0,
//     AP for one without any document at or above the relevance threshold;
//     such queries are left out of that mean and counted.
package rankeval
