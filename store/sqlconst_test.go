package store

import (
	"go/ast"
	"go/parser"
	"go/token"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// sqlMethods take an SQL text as their first argument after the context (or first, without).
var sqlMethods = map[string]int{
	"ExecContext": 1, "QueryContext": 1, "QueryRowContext": 1, "PrepareContext": 1,
	"Exec": 0, "Query": 0, "QueryRow": 0, "Prepare": 0,
}

// storeHelpers are the store's own wrappers around the statement cache, with the position of
// their SQL argument; their callers must pass constants like everyone else.
var storeHelpers = map[string][]int{"txRow": {2}, "txExec": {2}, "readRow": {1}, "readRows": {1},
	"stmt": {0}, "upsertID": {4, 5}, "find": {1},
	"execRows": {0}, "layIn": {2, 3}}

// storeFuncs are the store's plain functions that run SQL given to them (rows.go), with the
// position of their SQL argument.
var storeFuncs = map[string]int{"eachRow": 2, "queryAll": 2}

// passThrough names the functions that only hand on SQL their callers gave them (the statement
// caches, and the bulk importer's executor, which is given one of its tables of constant
// multi-row statements); the callers are what is checked. "*" covers a whole file.
var passThrough = map[string]map[string]bool{
	"judge_statements.go": {"*": true},
	"import_importer.go":  {"stmt": true, "upsertID": true},
	"import_bulk.go":      {"execCount": true},
	"import_tables.go":    {"find": true},
	"import_copy.go":      {"execRows": true, "layIn": true},
	"rows.go":             {"eachRow": true, "queryAll": true},
}

// sqlReceiver recognises the handles SQL is run on by the names this code base gives them:
// a transaction tx, a database db or conn (also as fields, as the importer keeps them), and
// the store's writer s.w and readers s.r.
// Prepared statements are not matched: their SQL was checked where they were prepared.
func sqlReceiver(x ast.Expr) bool {
	switch x := x.(type) {
	case *ast.Ident:
		return x.Name == "tx" || x.Name == "db" || x.Name == "conn"
	case *ast.SelectorExpr:
		return x.Sel.Name == "w" || x.Sel.Name == "r" || x.Sel.Name == "db" || x.Sel.Name == "tx" || x.Sel.Name == "conn"
	}
	return false
}

// trustedSQL are the non-constant SQL texts allowed: the migration files embedded in the
// binary, and the statements of copy_tables.go's table list, which holds string literals only
// (TestCopyTablesAreLiterals).
var trustedSQL = map[string]bool{"m.SQL": true, "t.read": true, "t.clear": true, "t.disable": true, "t.enable": true}

func exprText(e ast.Expr) string {
	if s, ok := e.(*ast.SelectorExpr); ok {
		if id, ok := s.X.(*ast.Ident); ok {
			return id.Name + "." + s.Sel.Name
		}
	}
	return ""
}

// TestSQLIsNeverBuiltFromValues fails when any non-test Go file of the module passes SQL that
// is not a constant: string literals, package constants, + of those, and Store.dialect
// choosing between two of them. Values must travel as
// parameters, so no input can change a statement's meaning.
func TestSQLIsNeverBuiltFromValues(t *testing.T) {
	root, err := filepath.Abs("..")
	if err != nil {
		t.Fatal(err)
	}
	fset := token.NewFileSet()
	pkgs := map[string][]*ast.File{}
	err = filepath.WalkDir(root, func(path string, d os.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() && (strings.HasPrefix(d.Name(), ".") || d.Name() == "testdata") && path != root {
			return filepath.SkipDir
		}
		if d.IsDir() || !strings.HasSuffix(path, ".go") || strings.HasSuffix(path, "_test.go") {
			return nil
		}
		f, err := parser.ParseFile(fset, path, nil, 0)
		if err != nil {
			return err
		}
		pkgs[filepath.Dir(path)] = append(pkgs[filepath.Dir(path)], f)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	checked := 0
	for _, files := range pkgs {
		consts := map[string]bool{}
		for _, f := range files {
			for _, decl := range f.Decls {
				if g, ok := decl.(*ast.GenDecl); ok && g.Tok == token.CONST {
					for _, spec := range g.Specs {
						for _, n := range spec.(*ast.ValueSpec).Names {
							consts[n.Name] = true
						}
					}
				}
			}
		}
		var constant func(e ast.Expr) bool
		constant = func(e ast.Expr) bool {
			switch e := e.(type) {
			case *ast.BasicLit:
				return e.Kind == token.STRING
			case *ast.Ident:
				return consts[e.Name]
			case *ast.ParenExpr:
				return constant(e.X)
			case *ast.BinaryExpr:
				return e.Op == token.ADD && constant(e.X) && constant(e.Y)
			case *ast.CallExpr:
				// s.dialect(sqliteX, postgresX): one of two constants, by engine.
				sel, ok := e.Fun.(*ast.SelectorExpr)
				return ok && sel.Sel.Name == "dialect" && len(e.Args) == 2 && constant(e.Args[0]) && constant(e.Args[1])
			}
			return false
		}
		for _, f := range files {
			skip := passThrough[filepath.Base(fset.Position(f.Pos()).Filename)]
			if skip["*"] {
				continue
			}
			ast.Inspect(f, func(n ast.Node) bool {
				if fn, ok := n.(*ast.FuncDecl); ok && skip[fn.Name.Name] {
					return false
				}
				call, ok := n.(*ast.CallExpr)
				if !ok {
					return true
				}
				var name string
				var positions []int
				fun := call.Fun
				if ix, ok := fun.(*ast.IndexExpr); ok {
					fun = ix.X // queryAll[T](...)
				}
				switch fun := fun.(type) {
				case *ast.Ident:
					i, ok := storeFuncs[fun.Name]
					if !ok {
						return true
					}
					name, positions = fun.Name, []int{i}
				case *ast.SelectorExpr:
					name = fun.Sel.Name
					if positions, ok = storeHelpers[name]; !ok {
						i, ok := sqlMethods[name]
						if !ok || !sqlReceiver(fun.X) {
							return true
						}
						positions = []int{i}
					}
				default:
					return true
				}
				for _, i := range positions {
					if len(call.Args) <= i {
						continue
					}
					arg := call.Args[i]
					if id, ok := arg.(*ast.Ident); ok && id.Name == "ctx" && len(call.Args) > i+1 {
						arg = call.Args[i+1] // pgx's own methods take the context first
					}
					checked++
					if !constant(arg) && !trustedSQL[exprText(arg)] {
						t.Errorf("%s: SQL passed to %s is built at run time; use a constant and parameters", fset.Position(arg.Pos()), name)
					}
				}
				return true
			})
		}
	}
	if checked < 20 {
		t.Fatalf("only %d SQL calls found: the check is not looking at the code", checked)
	}
}
