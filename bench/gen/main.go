// Command gen writes a deterministic combined pair-rows CSV for the import benchmark:
// -queries queries with -per documents each; consecutive queries 2k and 2k+1 share their
// documents (same content), as candidates of related queries do, so the file names
// queries × per pairs and queries × per / 2 documents.
package main

import (
	"bufio"
	"flag"
	"fmt"
	"os"
)

func main() {
	queries := flag.Int("queries", 20000, "number of queries")
	per := flag.Int("per", 50, "documents per query")
	flag.Parse()
	w := bufio.NewWriterSize(os.Stdout, 1<<20)
	defer w.Flush()
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
