package main

import (
	"io"
	"log/slog"
	"net/http"
	"strings"
	"testing"
)

func TestPprofOnlyOnLoopback(t *testing.T) {
	log := slog.New(slog.NewTextHandler(io.Discard, nil))
	for _, addr := range []string{"0.0.0.0:0", ":0", "192.0.2.1:0", "example.org:0"} {
		if stop, err := servePprof(addr, log); err == nil {
			stop()
			t.Errorf("--pprof %s was accepted, want it refused as not loopback", addr)
		}
	}
	addr := freeAddr(t)
	stop, err := servePprof(addr, log)
	if err != nil {
		t.Fatal(err)
	}
	defer stop()
	res, err := http.Get("http://" + addr + "/debug/pprof/")
	if err != nil {
		t.Fatal(err)
	}
	b, _ := io.ReadAll(res.Body)
	res.Body.Close()
	if res.StatusCode != http.StatusOK || !strings.Contains(string(b), "goroutine") {
		t.Errorf("profiler index: status %d, want 200 listing the goroutine profile", res.StatusCode)
	}
}
