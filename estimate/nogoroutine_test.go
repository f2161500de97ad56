package estimate

import (
	"go/ast"
	"go/parser"
	"go/token"
	"path/filepath"
	"strings"
	"testing"
)

// The race detector's run in scripts/test.sh leaves this package out because it starts no
// goroutine, so the detector would have nothing to watch. This keeps that true: a go
// statement here fails until the package goes back into the race run.
func TestStartsNoGoroutine(t *testing.T) {
	files, err := filepath.Glob("*.go")
	if err != nil {
		t.Fatal(err)
	}
	fset := token.NewFileSet()
	read := 0
	for _, name := range files {
		if strings.HasSuffix(name, "_test.go") {
			continue
		}
		f, err := parser.ParseFile(fset, name, nil, 0)
		if err != nil {
			t.Fatal(err)
		}
		read++
		ast.Inspect(f, func(n ast.Node) bool {
			if g, ok := n.(*ast.GoStmt); ok {
				t.Errorf("%s: a go statement; put estimate back into the race run of scripts/test.sh", fset.Position(g.Pos()))
			}
			return true
		})
	}
	if read == 0 {
		t.Fatal("no source files read: the check checks nothing")
	}
}
