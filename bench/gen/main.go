// Command gen writes deterministic benchmark input. By default, a combined pair-rows CSV for
// the import benchmark: -queries queries with -per documents each; consecutive queries 2k and
// 2k+1 share their documents (same content), as candidates of related queries do, so the file
// names queries × per pairs and queries × per / 2 documents.
//
// With -pairs it writes the same rows' pairs alone (query_id, doc_id, priority), a pairs
// file for queries and documents already loaded.
//
// With -run N it writes run N of a set instead, for the planning benchmark (bench/plan.sh):
// for each of the same queries, -depth documents ranked out of a pool of 4 × depth, the first
// -per of them the query's documents in the rows file. Every run ranks by the same hidden relevance plus noise
// that grows with N (as estimate/bench_test.go invents its runs), so the top ranks overlap as
// real runs' do.
package main

import (
	"bufio"
	"cmp"
	"flag"
	"fmt"
	"math/rand/v2"
	"os"
	"slices"
)

func main() {
	queries := flag.Int("queries", 20000, "number of queries")
	per := flag.Int("per", 50, "documents per query")
	run := flag.Int("run", -1, "write run N (0, 1, ...) of a set instead of pair rows")
	pairs := flag.Bool("pairs", false, "write the rows' pairs alone, as a pairs file")
	depth := flag.Int("depth", 100, "documents ranked per query (with -run)")
	flag.Parse()
	w := bufio.NewWriterSize(os.Stdout, 1<<20)
	defer w.Flush()
	if *run >= 0 {
		writeRun(w, *run, *queries, *per, *depth)
		return
	}
	if *pairs {
		fmt.Fprintln(w, "query_id,doc_id,priority")
		for q := 0; q < *queries; q++ {
			for j := 0; j < *per; j++ {
				fmt.Fprintf(w, "q%d,doc-%d,%d\n", q, (q/2)*(*per)+j, (q*31+j)%100)
			}
		}
		return
	}
	fmt.Fprintln(w, "query_id,query_text,query_need,doc_id,title,url,body,body_format,priority,lang")
	for q := 0; q < *queries; q++ {
		for j := 0; j < *per; j++ {
			d := (q/2)*(*per) + j
			fmt.Fprintf(w, "q%d,cheap flights to city %d,a fare under 200 for city %d,doc-%d,\"Title %d, with comma\",https://example.org/d/%d,"+
				"\"Body of document %d: some ordinary text that runs for a while, with \"\"quotes\"\" and <b>markup</b>.\",html,%d,en\n",
				q, q, q, d, d, d, d, (q*31+j)%100)
		}
	}
}

func writeRun(w *bufio.Writer, run, queries, per, depth int) {
	type scored struct {
		doc   string
		score float64
	}
	noise := 0.1 + 0.02*float64(run)
	rng := rand.New(rand.NewPCG(uint64(run)+1, 2))
	pool := make([]scored, 4*depth)
	for q := 0; q < queries; q++ {
		hidden := rand.New(rand.NewPCG(uint64(q), 1)) // the same relevance in every run
		for j := range pool {
			if j < per {
				pool[j].doc = fmt.Sprintf("doc-%d", (q/2)*per+j)
			} else {
				pool[j].doc = fmt.Sprintf("q%d-extra-%d", q, j)
			}
			pool[j].score = hidden.NormFloat64() + noise*rng.NormFloat64()
		}
		slices.SortFunc(pool, func(a, b scored) int { return cmp.Compare(b.score, a.score) })
		for rank, s := range pool[:depth] {
			fmt.Fprintf(w, "q%d Q0 %s %d %.9f run%02d\n", q, s.doc, rank+1, s.score, run)
		}
	}
}
