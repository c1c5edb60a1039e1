package store

import (
	"bytes"
	"encoding/json"
	"fmt"
	"go/ast"
	"go/importer"
	"go/parser"
	"go/token"
	"go/types"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"sort"
	"testing"
)

// The SQL lint: every query handed to the database must be built from
// constants, so no value can ever be formatted into SQL (STYLE.md: "Never
// format values into SQL"; OWASP SQL Injection Prevention Cheat Sheet,
// defence 1: parameterized queries).
//
// A sink is a call to a method whose signature has a string parameter
// named query (database/sql's ExecContext, QueryContext, QueryRowContext,
// Exec, Query, QueryRow, PrepareContext, Prepare and driver's
// PrepareContext); statement methods, which take only arguments, are not
// sinks. The query argument of a sink is safe when it is
//
//   - a constant expression (string literals and named constants, joined
//     with + or not);
//   - a + of safe operands (q := `SELECT ` + cols; q += ` LIMIT ?`);
//   - a local variable every assignment of which is safe;
//   - a call to one of sqlBuilders, hand-audited helpers that concatenate
//     only constant fragments and ? placeholders, whose string arguments
//     are themselves safe; or the first result of such a call
//     (where, args := listWhere(f));
//   - a parameter of the enclosing unexported function or closure, alone
//     or joined with safe parts: that function then becomes a sink itself
//     and each of its callers, all in this package, must pass a safe
//     argument (rawQuery's query, datasetWhere's cond, the run closure in
//     datasets.go). An exported function cannot be a sink: callers outside
//     the package are not checked.
//
// Anything else — fmt.Sprintf, a concatenation with a non-constant, a
// field, a call to any other function — fails the lint. sqlExempt lists
// the functions allowed to break the rule, each with its reason.
var sqlBuilders = map[string]bool{
	"multiInsert": true, // repeats a constant row of placeholders n times after a constant head
	"orderInsert": true, // multiInsert with constant arguments
	"listWhere":   true, // joins constant conditions; every value is a placeholder argument
}

var sqlExempt = map[string]string{
	"migrate": "runs the migration scripts embedded from migrations/*.sql, fixed at build time",
	// readPool's methods are the read pool's QueryContext and
	// QueryRowContext themselves: every call to them is checked like a
	// call to database/sql's.
	"QueryContext":    "readPool's statement-caching QueryContext; its callers are checked",
	"QueryRowContext": "readPool's statement-caching QueryRowContext; its callers are checked",
	"stmt":            "readPool's statement cache, called only by the two above",
}

type sqlViolation struct {
	pos  token.Position
	what string
}

// lintSQL type-checks the files of one package and returns its violations.
func lintSQL(t *testing.T, fset *token.FileSet, files []*ast.File, imp types.Importer) []sqlViolation {
	t.Helper()
	info := &types.Info{Types: map[ast.Expr]types.TypeAndValue{}, Defs: map[*ast.Ident]types.Object{}, Uses: map[*ast.Ident]types.Object{}}
	conf := types.Config{Importer: imp}
	if _, err := conf.Check(files[0].Name.Name, fset, files, info); err != nil {
		t.Fatalf("type-check: %v", err)
	}
	l := &sqlLinter{fset: fset, info: info, wrappers: map[types.Object][]int{}, assigns: map[types.Object][]ast.Expr{}, funcOf: map[types.Object]string{}}
	// Every assignment to a local variable, and the function owning each
	// parameter.
	for _, f := range files {
		for _, d := range f.Decls {
			fd, ok := d.(*ast.FuncDecl)
			if !ok || fd.Body == nil {
				continue
			}
			l.collect(fd)
		}
	}
	// Find sinks, then wrappers of sinks, until no new wrapper appears.
	for {
		l.out = nil
		before := 0
		for _, ix := range l.wrappers {
			before += len(ix)
		}
		for _, f := range files {
			for _, d := range f.Decls {
				if fd, ok := d.(*ast.FuncDecl); ok && fd.Body != nil {
					l.checkFunc(fd)
				}
			}
		}
		after := 0
		for _, ix := range l.wrappers {
			after += len(ix)
		}
		if after == before {
			return l.out
		}
	}
}

type sqlLinter struct {
	fset     *token.FileSet
	info     *types.Info
	wrappers map[types.Object][]int        // function or closure variable → indexes of its query parameters
	params   map[types.Object]types.Object // parameter → its function or closure variable
	assigns  map[types.Object][]ast.Expr   // local variable → every right-hand side (nil: not analysable)
	results  map[ast.Expr]int              // right-hand side call → which result a variable takes
	funcOf   map[types.Object]string       // local variable or parameter → enclosing FuncDecl name
	out      []sqlViolation
}

func (l *sqlLinter) collect(fd *ast.FuncDecl) {
	if l.params == nil {
		l.params, l.results = map[types.Object]types.Object{}, map[ast.Expr]int{}
	}
	own := l.info.Defs[fd.Name]
	addParams := func(owner types.Object, ft *ast.FuncType) {
		for _, fl := range ft.Params.List {
			for _, n := range fl.Names {
				if o := l.info.Defs[n]; o != nil {
					l.params[o], l.funcOf[o] = owner, fd.Name.Name
				}
			}
		}
	}
	addParams(own, fd.Type)
	ast.Inspect(fd.Body, func(n ast.Node) bool {
		switch n := n.(type) {
		case *ast.AssignStmt:
			for i, lhs := range n.Lhs {
				id, ok := lhs.(*ast.Ident)
				if !ok {
					continue
				}
				o := l.info.Defs[id]
				if o == nil {
					o = l.info.Uses[id]
				}
				if o == nil {
					continue
				}
				l.funcOf[o] = fd.Name.Name
				var rhs ast.Expr
				if len(n.Rhs) == len(n.Lhs) {
					rhs = n.Rhs[i]
					if fl, ok := rhs.(*ast.FuncLit); ok {
						addParams(o, fl.Type)
					}
				} else {
					rhs = n.Rhs[0]
					l.results[rhs] = i
				}
				if n.Tok == token.ADD_ASSIGN {
					l.assigns[o] = append(l.assigns[o], rhs)
				} else {
					l.assigns[o] = append(l.assigns[o], rhs)
				}
			}
		case *ast.ValueSpec:
			for i, id := range n.Names {
				o := l.info.Defs[id]
				if o == nil {
					continue
				}
				l.funcOf[o] = fd.Name.Name
				if i < len(n.Values) {
					l.assigns[o] = append(l.assigns[o], n.Values[i])
				} else if len(n.Values) == 0 {
					l.assigns[o] = append(l.assigns[o], nil) // declared empty: ""
				}
			}
		}
		return true
	})
}

func (l *sqlLinter) checkFunc(fd *ast.FuncDecl) {
	if _, ok := sqlExempt[fd.Name.Name]; ok {
		return
	}
	ast.Inspect(fd.Body, func(n ast.Node) bool {
		call, ok := n.(*ast.CallExpr)
		if !ok {
			return true
		}
		for _, at := range l.queryArgs(call) {
			if at >= len(call.Args) {
				continue
			}
			if why := l.unsafe(call.Args[at], map[types.Object]bool{}); why != "" {
				l.out = append(l.out, sqlViolation{l.fset.Position(call.Args[at].Pos()), why})
			}
		}
		return true
	})
}

// queryArgs returns the indexes of call's query arguments (none when call
// is not a sink).
func (l *sqlLinter) queryArgs(call *ast.CallExpr) []int {
	var callee types.Object
	switch fn := call.Fun.(type) {
	case *ast.Ident:
		callee = l.info.Uses[fn]
	case *ast.SelectorExpr:
		callee = l.info.Uses[fn.Sel]
	}
	if callee == nil {
		return nil
	}
	if ix, ok := l.wrappers[callee]; ok {
		return ix
	}
	f, ok := callee.(*types.Func)
	if !ok {
		return nil
	}
	sig := f.Type().(*types.Signature)
	if sig.Recv() == nil {
		return nil
	}
	for i := range sig.Params().Len() {
		p := sig.Params().At(i)
		if p.Name() == "query" && types.Identical(p.Type(), types.Typ[types.String]) {
			return []int{i}
		}
	}
	return nil
}

// unsafe returns why e may carry a value into SQL, or "" when it cannot.
func (l *sqlLinter) unsafe(e ast.Expr, seen map[types.Object]bool) string {
	if e == nil {
		return ""
	}
	if tv, ok := l.info.Types[e]; ok && tv.Value != nil {
		return ""
	}
	switch e := e.(type) {
	case *ast.ParenExpr:
		return l.unsafe(e.X, seen)
	case *ast.BinaryExpr:
		if e.Op != token.ADD {
			return "operator " + e.Op.String() + " in a query"
		}
		if why := l.unsafe(e.X, seen); why != "" {
			return why
		}
		return l.unsafe(e.Y, seen)
	case *ast.CallExpr:
		name := ""
		switch fn := e.Fun.(type) {
		case *ast.Ident:
			name = fn.Name
		case *ast.SelectorExpr:
			if x, ok := fn.X.(*ast.Ident); ok {
				name = x.Name + "." + fn.Sel.Name
			}
		}
		if !sqlBuilders[name] {
			return "query built by a call to " + nameOr(name, "a function") + " (not a listed SQL builder)"
		}
		for _, a := range e.Args {
			if tv, ok := l.info.Types[a]; ok && types.Identical(tv.Type, types.Typ[types.String]) {
				if why := l.unsafe(a, seen); why != "" {
					return why
				}
			}
		}
		return ""
	case *ast.Ident:
		o := l.info.Uses[e]
		if o == nil {
			return "unknown identifier " + e.Name
		}
		if owner, ok := l.params[o]; ok {
			if owner == nil || owner.Exported() {
				return "parameter " + e.Name + " of an exported or unnamed function"
			}
			sig, _ := owner.Type().(*types.Signature)
			for i := 0; sig != nil && i < sig.Params().Len(); i++ {
				if sig.Params().At(i) == o && !slices.Contains(l.wrappers[owner], i) {
					l.wrappers[owner] = append(l.wrappers[owner], i)
				}
			}
			return "" // its callers are checked as sinks
		}
		rhs, local := l.assigns[o]
		if !local {
			return "non-local variable " + e.Name
		}
		if seen[o] {
			return ""
		}
		seen[o] = true
		for _, r := range rhs {
			if why := l.unsafe(r, seen); why != "" {
				return why
			}
		}
		return ""
	}
	return fmt.Sprintf("query built by a %T", e)
}

func nameOr(name, alt string) string {
	if name == "" {
		return alt
	}
	return name
}

// goList returns the packages `go list -export -deps` reports for args.
type listedPackage struct {
	ImportPath, Dir, Export string
	GoFiles                 []string
}

func goList(t *testing.T, args ...string) map[string]listedPackage {
	t.Helper()
	cmd := exec.Command("go", append([]string{"list", "-export", "-deps", "-json"}, args...)...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("go list: %v\n%s", err, stderr.String())
	}
	pkgs := map[string]listedPackage{}
	dec := json.NewDecoder(bytes.NewReader(out))
	for {
		var p listedPackage
		if err := dec.Decode(&p); err == io.EOF {
			break
		} else if err != nil {
			t.Fatal(err)
		}
		pkgs[p.ImportPath] = p
	}
	return pkgs
}

func exportImporter(fset *token.FileSet, pkgs map[string]listedPackage) types.Importer {
	return importer.ForCompiler(fset, "gc", func(path string) (io.ReadCloser, error) {
		p, ok := pkgs[path]
		if !ok || p.Export == "" {
			return nil, fmt.Errorf("no export data for %s", path)
		}
		return os.Open(p.Export)
	})
}

// TestQueriesAreBuiltFromConstants runs the SQL lint over this package.
func TestQueriesAreBuiltFromConstants(t *testing.T) {
	if testing.Short() {
		t.Skip("runs go list")
	}
	pkgs := goList(t, "ebb/internal/store", "fmt")
	self := pkgs["ebb/internal/store"]
	fset := token.NewFileSet()
	var files []*ast.File
	for _, name := range self.GoFiles {
		f, err := parser.ParseFile(fset, filepath.Join(self.Dir, name), nil, 0)
		if err != nil {
			t.Fatal(err)
		}
		files = append(files, f)
	}
	vs := lintSQL(t, fset, files, exportImporter(fset, pkgs))
	sort.Slice(vs, func(i, j int) bool { return vs[i].pos.String() < vs[j].pos.String() })
	for _, v := range vs {
		t.Errorf("%s: %s", v.pos, v.what)
	}
}

// TestSQLLintCatches proves the lint on small programs: it must flag
// formatting and concatenation of values and pass the allowed builders.
func TestSQLLintCatches(t *testing.T) {
	if testing.Short() {
		t.Skip("runs go list")
	}
	pkgs := goList(t, "ebb/internal/store", "fmt")
	head := "package p\nimport (\"context\"; \"database/sql\"; \"fmt\"; \"strings\")\nvar _ = fmt.Sprint\nvar _ = strings.Repeat\nconst cols = `a, b`\n" +
		"func multiInsert(head, row string, n int) string { return head + strings.Repeat(row, n) }\n" +
		"func listWhere(id int) (string, []any) { return \"id = ?\", []any{id} }\nvar _ context.Context\n"
	tests := []struct {
		name, body string
		flagged    int
	}{
		{"literal", "func f(ctx context.Context, db *sql.DB) { db.ExecContext(ctx, `DELETE FROM t WHERE id = ?`, 1) }", 0},
		{"constant concatenation", "func f(ctx context.Context, db *sql.DB, n int) { q := `SELECT ` + cols + ` FROM t`; if n > 0 { q += ` LIMIT ?` }; db.QueryContext(ctx, q, n) }", 0},
		{"builder", "func f(ctx context.Context, tx *sql.Tx) { tx.ExecContext(ctx, multiInsert(`INSERT INTO t VALUES `, `(?,?)`, 3)) }", 0},
		{"builder result", "func f(ctx context.Context, db *sql.DB) { w, args := listWhere(1); db.QueryRowContext(ctx, `SELECT 1 FROM t WHERE `+w, args...) }", 0},
		{"wrapper with constant callers", "func run(ctx context.Context, db *sql.DB, query string) { db.Exec(query) }\nfunc g(db *sql.DB) { run(nil, db, `VACUUM`) }", 0},
		{"statement exec is not a sink", "func f(ctx context.Context, st *sql.Stmt, name string) { st.ExecContext(ctx, name) }", 0},
		{"sprintf", "func F(ctx context.Context, db *sql.DB, name string) { db.ExecContext(ctx, fmt.Sprintf(`DELETE FROM t WHERE name = '%s'`, name)) }", 1},
		{"concatenated value", "func F(db *sql.DB, name string) { db.Query(`SELECT * FROM t WHERE name = '` + name + `'`) }", 1},
		{"variable from a value", "func F(ctx context.Context, db *sql.DB, order string) { q := `SELECT a FROM t ORDER BY ` + order; db.QueryContext(ctx, q) }", 1},
		{"builder fed a value", "func F(ctx context.Context, tx *sql.Tx, tbl string) { tx.ExecContext(ctx, multiInsert(`INSERT INTO `+tbl+` VALUES `, `(?)`, 1)) }", 1},
		{"wrapper fed a value", "func run(db *sql.DB, query string) { db.Exec(query) }\nfunc G(db *sql.DB, id string) { run(db, `DELETE FROM t WHERE id = `+id) }", 1},
		{"closure wrapper fed a value", "func F(ctx context.Context, db *sql.DB, id string) { run := func(q string) { db.PrepareContext(ctx, q) }; run(`x` + id) }", 1},
		{"helper with constant callers", "func where(db *sql.DB, cond string, arg any) { db.QueryRow(`SELECT a FROM t WHERE `+cond, arg) }\nfunc g(db *sql.DB) { where(db, `id = ?`, 1) }", 0},
		{"helper fed a value", "func where(db *sql.DB, cond string) { db.QueryRow(`SELECT a FROM t WHERE ` + cond) }\nfunc G(db *sql.DB, id string) { where(db, `id = `+id) }", 1},
		{"exported wrapper", "func Run(db *sql.DB, query string) { db.Exec(query) }", 1},
		{"other function", "func F(db *sql.DB, s fmt.Stringer) { db.QueryRow(strings.ToUpper(s.String())) }", 1},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			fset := token.NewFileSet()
			f, err := parser.ParseFile(fset, "p.go", head+tt.body+"\n", 0)
			if err != nil {
				t.Fatal(err)
			}
			vs := lintSQL(t, fset, []*ast.File{f}, exportImporter(fset, pkgs))
			if len(vs) != tt.flagged {
				t.Errorf("lint found %d violations %v, want %d", len(vs), vs, tt.flagged)
			}
		})
	}
}
