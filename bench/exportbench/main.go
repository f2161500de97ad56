// Command exportbench writes a deterministic synthetic learning-to-rank
// data set through export.SVMlightWriter and reports time, throughput and
// peak resident memory. bench/gen_svmlight_data.py makes the same values
// with numpy, so other writers can be timed on identical data.
package main

import (
	"encoding/json"
	"flag"
	"fmt"
	"math"
	"os"
	"runtime/pprof"
	"strconv"
	"syscall"
	"time"

	"github.com/pertinent/pertinent/export"
)

// splitmix64 is the SplitMix64 finaliser; keyed by (row, feature) index it
// gives the same stream in Go and in numpy.
func splitmix64(x uint64) uint64 {
	z := x + 0x9E3779B97F4A7C15
	z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9
	z = (z ^ (z >> 27)) * 0x94D049BB133111EB
	return z ^ (z >> 31)
}

// value of feature j (0-based) of row i. Four kinds, like real ranking
// features: sparse counts, lengths, 6-decimal ratios, full-precision scores.
func value(i, j, nf uint64) float64 {
	u := float64(splitmix64(i*nf+j)>>11) * 0x1p-53
	switch j % 4 {
	case 0:
		if u < 0.3 {
			return 0
		}
		return math.Floor(u * 200)
	case 1:
		return math.Floor(u * 100000)
	case 2:
		return math.Floor(u*1e6) / 1e6
	default:
		return u * 30
	}
}

func grade(i uint64) int { return int(splitmix64(i^0xA5A5A5A5A5A5A5A5) % 5) }

const docsPerQuery = 120

var sink int // keeps -generate-only from being optimised away

func main() {
	rows := flag.Int("rows", 1000000, "rows to write")
	nf := flag.Int("features", 136, "dense features per row")
	out := flag.String("out", "train.svmlight", "output file")
	workers := flag.Int("workers", 0, "formatting goroutines (0: GOMAXPROCS)")
	genOnly := flag.Bool("generate-only", false, "make the rows but write nothing, to time the data source alone")
	cpuprof := flag.String("cpuprofile", "", "write a CPU profile here")
	flag.Parse()
	if *cpuprof != "" {
		pf, err := os.Create(*cpuprof)
		if err != nil {
			fmt.Fprintln(os.Stderr, err)
			os.Exit(1)
		}
		pprof.StartCPUProfile(pf)
		defer pprof.StopCPUProfile()
	}

	f, err := os.Create(*out)
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	start := time.Now()
	w := export.NewSVMlightWriter(f, nil, export.SVMlightOptions{Workers: *workers})
	feats := make([]export.Feature, *nf)
	var qbuf, dbuf []byte
	for i := 0; i < *rows; i++ {
		for j := range feats {
			feats[j] = export.Feature{Index: j + 1, Value: value(uint64(i), uint64(j), uint64(*nf))}
		}
		qbuf = strconv.AppendInt(append(qbuf[:0], 'q'), int64(i/docsPerQuery), 10)
		dbuf = strconv.AppendInt(append(dbuf[:0], 'd'), int64(i), 10)
		r := export.Row{QueryID: string(qbuf), DocID: string(dbuf), Grade: grade(uint64(i)), Features: feats}
		if *genOnly {
			sink += len(r.QueryID) + len(r.DocID) + r.Grade + int(r.Features[len(r.Features)-1].Value)
			continue
		}
		if err := w.Write(r); err != nil {
			fmt.Fprintln(os.Stderr, err)
			os.Exit(1)
		}
	}
	if err := w.Close(); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	if err := f.Close(); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	elapsed := time.Since(start)
	st, _ := os.Stat(*out)
	var ru syscall.Rusage
	_ = syscall.Getrusage(syscall.RUSAGE_SELF, &ru)
	rep := map[string]any{
		"rows":          *rows,
		"features":      *nf,
		"bytes":         st.Size(),
		"seconds":       elapsed.Seconds(),
		"rows_per_sec":  float64(*rows) / elapsed.Seconds(),
		"mb_per_sec":    float64(st.Size()) / 1e6 / elapsed.Seconds(),
		"peak_rss_mb":   float64(ru.Maxrss) / 1024, // Linux reports KiB
		"queries":       w.QIDs().Len(),
		"includes_data": "generation of values is inside the timed loop",
	}
	json.NewEncoder(os.Stdout).Encode(rep)
}
