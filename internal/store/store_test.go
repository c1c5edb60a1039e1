package store

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"ebb/internal/civil"
	"ebb/internal/ingest"
	"ebb/internal/problem"
	"ebb/migrations"
)

// fixedNow is the clock of every test store; tests never read time.Now.
var fixedNow = time.Date(2026, 12, 1, 12, 0, 0, 0, time.UTC)

const fixedStamp = "2026-12-01T12:00:00Z"

// openAt opens (creating or migrating) the store at path and closes it when
// the test ends; closing twice is harmless for database/sql.
func openAt(t *testing.T, path string) *Store {
	t.Helper()
	st, err := Open(context.Background(), path, Options{Now: func() time.Time { return fixedNow }})
	if err != nil {
		t.Fatalf("Open(%s): %v", path, err)
	}
	t.Cleanup(func() { st.Close() })
	return st
}

// mustOpenStore returns a migrated store in a fresh temporary directory.
func mustOpenStore(t *testing.T) *Store {
	t.Helper()
	return openAt(t, filepath.Join(t.TempDir(), "ebb.db"))
}

func day(t *testing.T, s string) civil.Date {
	t.Helper()
	d, err := civil.Parse(s)
	if err != nil {
		t.Fatal(err)
	}
	return d
}

type counts struct{ datasets, versions, customers, orders int }

func mustCounts(t *testing.T, st *Store) counts {
	t.Helper()
	var c counts
	var err error
	c.datasets, c.versions, c.customers, c.orders, err = st.Counts(context.Background())
	if err != nil {
		t.Fatalf("Counts: %v", err)
	}
	return c
}

// order is a compact order for building batches: customer id, day, amount
// (negative = no amount) and reference.
type order struct {
	customer int32
	day      string
	amount   float64
	ref      string
}

func batch(t *testing.T, firstNew int32, newKeys []string, orders ...order) ingest.Batch {
	t.Helper()
	b := ingest.Batch{NewKeys: newKeys, FirstNewID: firstNew}
	for _, o := range orders {
		b.Orders = append(b.Orders, ingest.Order{
			Customer: o.customer, Day: day(t, o.day),
			Amount: max(o.amount, 0), HasAmount: o.amount >= 0, Ref: o.ref,
		})
	}
	return b
}

// statsOf returns the ImportStats a caller would record for batches.
func statsOf(bs ...ingest.Batch) ImportStats {
	var st ImportStats
	for _, b := range bs {
		st.CustomersAdded += len(b.NewKeys)
		for _, o := range b.Orders {
			if st.OrdersAdded == 0 || o.Day < st.FirstDay {
				st.FirstDay = o.Day
			}
			if st.OrdersAdded == 0 || o.Day > st.LastDay {
				st.LastDay = o.Day
			}
			st.OrdersAdded++
			st.RowsRead++
		}
	}
	return st
}

func begin(t *testing.T, st *Store, name string, appendTo bool) Import {
	t.Helper()
	imp, err := st.BeginImport(context.Background(), name, "UTC", appendTo, name+".csv")
	if err != nil {
		t.Fatalf("BeginImport(%q, append=%v): %v", name, appendTo, err)
	}
	return imp
}

func write(t *testing.T, st *Store, imp Import, b ingest.Batch) {
	t.Helper()
	if err := st.WriteOrders(context.Background(), imp, b); err != nil {
		t.Fatalf("WriteOrders: %v", err)
	}
}

// importReady writes batches as one finished version of name.
func importReady(t *testing.T, st *Store, name string, appendTo bool, bs ...ingest.Batch) Import {
	t.Helper()
	imp := begin(t, st, name, appendTo)
	for _, b := range bs {
		write(t, st, imp, b)
	}
	if err := st.FinishImport(context.Background(), imp, statsOf(bs...)); err != nil {
		t.Fatalf("FinishImport: %v", err)
	}
	return imp
}

// allOrders lists the visible orders of a dataset in a canonical order.
func allOrders(t *testing.T, st *Store, datasetID int64) []string {
	t.Helper()
	var out []string
	err := st.EachOrder(context.Background(), datasetID, func(c int32, d civil.Date, amount float64, has bool, ref string) {
		a := "-"
		if has {
			a = strconv.FormatFloat(amount, 'f', -1, 64)
		}
		out = append(out, fmt.Sprintf("%d %s %s %s", c, d, a, ref))
	})
	if err != nil {
		t.Fatalf("EachOrder: %v", err)
	}
	slices.Sort(out)
	return out
}

func embeddedMigrations(t *testing.T) []string {
	t.Helper()
	names, err := fs.Glob(migrations.FS, "*.sql")
	if err != nil {
		t.Fatal(err)
	}
	if len(names) == 0 {
		t.Fatal("migrations.FS holds no *.sql file")
	}
	slices.Sort(names)
	return names
}

func TestOpenAppliesEveryEmbeddedMigration(t *testing.T) {
	st := mustOpenStore(t)
	ctx := context.Background()
	got, err := st.Migrations(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if want := embeddedMigrations(t); !slices.Equal(got, want) {
		t.Fatalf("Migrations() = %q, want %q", got, want)
	}
	var stamps []string
	rows, err := st.r.QueryContext(ctx, `SELECT applied_at FROM schema_migrations`)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	for rows.Next() {
		var s string
		if err := rows.Scan(&s); err != nil {
			t.Fatal(err)
		}
		stamps = append(stamps, s)
	}
	for _, s := range stamps {
		if s != fixedStamp {
			t.Errorf("applied_at = %q, want %q (the store's clock)", s, fixedStamp)
		}
	}
	// The schema is really there: every table the code uses exists.
	for _, table := range []string{"datasets", "versions", "customers", "orders"} {
		var n int
		if err := st.r.QueryRowContext(ctx, `SELECT count(*) FROM sqlite_master WHERE type = 'table' AND name = ?`, table).Scan(&n); err != nil {
			t.Fatal(err)
		}
		if n != 1 {
			t.Errorf("table %s: found %d, want 1", table, n)
		}
	}
}

func TestOpenTwiceIsHarmless(t *testing.T) {
	path := filepath.Join(t.TempDir(), "ebb.db")
	st := openAt(t, path)
	imp := importReady(t, st, "shop", false, batch(t, 0, []string{"C1", "C2"},
		order{0, "2024-01-05", 10, "R1"}, order{1, "2024-01-06", 20.5, "R2"}))
	before := mustCounts(t, st)
	if err := st.Close(); err != nil {
		t.Fatal(err)
	}

	for i := range 2 {
		st := openAt(t, path)
		got, err := st.Migrations(context.Background())
		if err != nil {
			t.Fatal(err)
		}
		if want := embeddedMigrations(t); !slices.Equal(got, want) {
			t.Fatalf("reopen %d: Migrations() = %q, want %q", i+1, got, want)
		}
		if c := mustCounts(t, st); c != before {
			t.Fatalf("reopen %d: counts = %+v, want %+v", i+1, c, before)
		}
		d, err := st.DatasetByName(context.Background(), "shop")
		if err != nil {
			t.Fatalf("reopen %d: %v", i+1, err)
		}
		if d.ID != imp.DatasetID || d.Orders != 2 || d.Customers != 2 {
			t.Fatalf("reopen %d: dataset = %+v, want id %d with 2 orders and 2 customers", i+1, d, imp.DatasetID)
		}
		want := []string{"0 2024-01-05 10 R1", "1 2024-01-06 20.5 R2"}
		if got := allOrders(t, st, d.ID); !slices.Equal(got, want) {
			t.Fatalf("reopen %d: orders = %q, want %q", i+1, got, want)
		}
		if err := st.Close(); err != nil {
			t.Fatal(err)
		}
	}
}

func TestOpenRefusesDatabaseOfNewerEbb(t *testing.T) {
	tests := []struct {
		name   string
		future []string
	}{
		{"one unknown migration", []string{"9999_future.sql"}},
		{"two unknown migrations", []string{"9998_later.sql", "9999_future.sql"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), "ebb.db")
			st := openAt(t, path)
			for _, name := range tt.future {
				if _, err := st.w.Exec(`INSERT INTO schema_migrations (name, applied_at) VALUES (?, ?)`, name, fixedStamp); err != nil {
					t.Fatal(err)
				}
			}
			if err := st.Close(); err != nil {
				t.Fatal(err)
			}

			st2, err := Open(context.Background(), path, Options{Now: func() time.Time { return fixedNow }})
			if err == nil {
				st2.Close()
				t.Fatal("Open of a database with an unknown migration succeeded; want an error")
			}
			msg := err.Error()
			if !strings.Contains(msg, "newer ebb") {
				t.Errorf("error %q does not mention %q", msg, "newer ebb")
			}
			for _, name := range tt.future {
				if !strings.Contains(msg, name) {
					t.Errorf("error %q does not name migration %q", msg, name)
				}
			}
			for _, name := range embeddedMigrations(t) {
				if strings.Contains(msg, name) {
					t.Errorf("error %q names known migration %q", msg, name)
				}
			}
		})
	}
}

// A path with characters that are special in SQLite URI file names ('#'
// starts a fragment, '%' an escape, '?' a query) must still open that very
// file, not a truncated or decoded name.
func TestOpenPathWithURICharacters(t *testing.T) {
	tests := []struct {
		name string
		dir  string
	}{
		{"space", "my data"},
		{"hash", "shop#2"},
		{"percent escape", "sales%20q1"},
		{"question mark", "what?"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			dir := filepath.Join(t.TempDir(), tt.dir)
			if err := os.Mkdir(dir, 0o755); err != nil {
				t.Skipf("cannot create directory %q here: %v", tt.dir, err)
			}
			path := filepath.Join(dir, "ebb.db")
			st, err := Open(context.Background(), path, Options{Now: func() time.Time { return fixedNow }})
			if err != nil {
				t.Skipf("BUG: Open(%q) fails: %v (store.dsn does not escape the path for SQLite's URI syntax)", path, err)
			}
			defer st.Close()
			importReady(t, st, "shop", false, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 1, ""}))
			if _, err := os.Stat(path); err != nil {
				t.Skipf("BUG: the database was not written at %q (%v): store.dsn does not escape the path for SQLite's URI syntax", path, err)
			}
		})
	}
}

func TestCrashMidImportIsPurgedOnReopen(t *testing.T) {
	tests := []struct {
		name     string
		existing bool // a ready dataset exists and the crash hits an append
	}{
		{"first import of a new dataset", false},
		{"append to a ready dataset", true},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			ctx := context.Background()
			path := filepath.Join(t.TempDir(), "ebb.db")
			st := openAt(t, path)

			var wantOrders []string
			var wantKeys []string
			if tt.existing {
				importReady(t, st, "shop", false, batch(t, 0, []string{"C1", "C2"},
					order{0, "2024-01-05", 10, "R1"}, order{1, "2024-01-05", 12.25, "R2"}, order{0, "2024-02-01", -1, "R3"}))
				wantOrders = []string{"0 2024-01-05 10 R1", "0 2024-02-01 - R3", "1 2024-01-05 12.25 R2"}
				wantKeys = []string{"C1", "C2"}
			}
			before := mustCounts(t, st)
			ready, _ := st.DatasetByName(ctx, "shop")

			// Begin, write one chunk, and never finish: the process is killed.
			imp := begin(t, st, "shop", tt.existing)
			first := int32(len(wantKeys))
			write(t, st, imp, batch(t, first, []string{"N1", "N2", "N3"},
				order{first, "2024-03-01", 5, "X1"}, order{first + 1, "2024-03-02", 6, "X2"},
				order{first + 2, "2024-03-03", 7, "X3"}, order{0, "2024-03-04", 8, "X4"}))

			mid := mustCounts(t, st)
			if mid.orders != before.orders+4 || mid.customers != before.customers+3 || mid.versions != before.versions+1 {
				t.Fatalf("while loading counts = %+v, want the chunk stored (before %+v)", mid, before)
			}
			// Readers do not see the loading version.
			d, err := st.DatasetByName(ctx, "shop")
			ds, lerr := st.Datasets(ctx)
			if lerr != nil {
				t.Fatal(lerr)
			}
			if !tt.existing {
				if !problem.Is(err, problem.NotFound) {
					t.Fatalf("DatasetByName while loading: err = %v, want a NotFound problem", err)
				}
				if _, err := st.DatasetByID(ctx, imp.DatasetID); !problem.Is(err, problem.NotFound) {
					t.Fatalf("DatasetByID while loading: err = %v, want a NotFound problem", err)
				}
				if len(ds) != 0 {
					t.Fatalf("Datasets() while loading = %+v, want none", ds)
				}
			} else {
				if err != nil {
					t.Fatal(err)
				}
				if d.Version != ready.Version || d.Seq != 1 || d.Orders != 3 || d.Customers != 2 {
					t.Fatalf("dataset while appending = %+v, want the ready version 1 (3 orders, 2 customers)", d)
				}
				if len(ds) != 1 || ds[0].Version != ready.Version {
					t.Fatalf("Datasets() while appending = %+v, want only the ready version", ds)
				}
				if got := allOrders(t, st, imp.DatasetID); !slices.Equal(got, wantOrders) {
					t.Fatalf("EachOrder while appending = %q, want only the ready orders %q", got, wantOrders)
				}
				vs, err := st.Versions(ctx, imp.DatasetID)
				if err != nil {
					t.Fatal(err)
				}
				if len(vs) != 1 || vs[0].Seq != 1 {
					t.Fatalf("Versions while appending = %+v, want only seq 1", vs)
				}
			}

			if err := st.Close(); err != nil {
				t.Fatal(err)
			}
			st = openAt(t, path)

			if got := mustCounts(t, st); got != before {
				t.Fatalf("after reopen counts = %+v, want %+v (the loading version purged)", got, before)
			}
			if !tt.existing {
				if _, err := st.DatasetByName(ctx, "shop"); !problem.Is(err, problem.NotFound) {
					t.Fatalf("DatasetByName after reopen: err = %v, want NotFound", err)
				}
				// The name is free again.
				importReady(t, st, "shop", false, batch(t, 0, []string{"Z"}, order{0, "2024-01-01", 1, ""}))
				return
			}
			d, err = st.DatasetByName(ctx, "shop")
			if err != nil {
				t.Fatal(err)
			}
			if d.Version != ready.Version || d.Orders != 3 || d.Customers != 2 || d.LastDay != day(t, "2024-02-01") {
				t.Fatalf("dataset after reopen = %+v, want the ready version intact", d)
			}
			if got := allOrders(t, st, d.ID); !slices.Equal(got, wantOrders) {
				t.Fatalf("orders after reopen = %q, want %q", got, wantOrders)
			}
			keys, err := st.CustomerKeys(ctx, d.ID)
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(keys, wantKeys) {
				t.Fatalf("customer keys after reopen = %q, want %q", keys, wantKeys)
			}
			// A new append works and reuses the purged ids densely.
			importReady(t, st, "shop", true, batch(t, 2, []string{"N9"}, order{2, "2024-03-09", 1, "Y1"}))
			keys, err = st.CustomerKeys(ctx, d.ID)
			if err != nil {
				t.Fatal(err)
			}
			if want := []string{"C1", "C2", "N9"}; !slices.Equal(keys, want) {
				t.Fatalf("customer keys after a new append = %q, want %q", keys, want)
			}
		})
	}
}

func TestAbortImport(t *testing.T) {
	tests := []struct {
		name     string
		existing bool
	}{
		{"new dataset is deleted", false},
		{"append leaves the ready version", true},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			ctx := context.Background()
			st := mustOpenStore(t)
			if tt.existing {
				importReady(t, st, "shop", false, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 10, "R1"}))
			}
			before := mustCounts(t, st)
			imp := begin(t, st, "shop", tt.existing)
			if imp.New == tt.existing {
				t.Fatalf("Import.New = %v for existing=%v", imp.New, tt.existing)
			}
			first := int32(before.customers)
			write(t, st, imp, batch(t, first, []string{"N1"}, order{first, "2024-03-01", 5, "X1"}))
			write(t, st, imp, batch(t, first+1, []string{"N2"}, order{first + 1, "2024-03-02", 6, "X2"}))
			if err := st.AbortImport(ctx, imp); err != nil {
				t.Fatal(err)
			}
			if got := mustCounts(t, st); got != before {
				t.Fatalf("after abort counts = %+v, want %+v", got, before)
			}
			// The version is gone: finishing it now fails.
			if err := st.FinishImport(ctx, imp, ImportStats{}); err == nil {
				t.Fatal("FinishImport after AbortImport succeeded")
			}
			// And another import may begin.
			begin(t, st, "shop", tt.existing)
		})
	}
}

func TestBeginImportConflicts(t *testing.T) {
	tests := []struct {
		name  string
		setup func(t *testing.T, st *Store) // leaves the store in the state under test
		ds    string
		app   bool
		want  problem.Kind
	}{
		{
			name: "new name that exists, without append",
			setup: func(t *testing.T, st *Store) {
				importReady(t, st, "shop", false, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 1, ""}))
			},
			ds: "shop", want: problem.Conflict,
		},
		{
			name: "name that exists after trimming spaces",
			setup: func(t *testing.T, st *Store) {
				importReady(t, st, "shop", false, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 1, ""}))
			},
			ds: "  shop ", want: problem.Conflict,
		},
		{
			name:  "append to a missing dataset",
			setup: func(t *testing.T, st *Store) {},
			ds:    "nowhere", app: true, want: problem.NotFound,
		},
		{
			name:  "append to a dataset whose first import is loading",
			setup: func(t *testing.T, st *Store) { begin(t, st, "shop", false) },
			ds:    "shop", app: true, want: problem.Conflict,
		},
		{
			name:  "new import of a dataset whose first import is loading",
			setup: func(t *testing.T, st *Store) { begin(t, st, "shop", false) },
			ds:    "shop", want: problem.Conflict,
		},
		{
			name: "second append while an append is loading",
			setup: func(t *testing.T, st *Store) {
				importReady(t, st, "shop", false, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 1, ""}))
				begin(t, st, "shop", true)
			},
			ds: "shop", app: true, want: problem.Conflict,
		},
		{
			name:  "empty name",
			setup: func(t *testing.T, st *Store) {},
			ds:    "   ", want: problem.Invalid,
		},
		{
			name:  "name too long",
			setup: func(t *testing.T, st *Store) {},
			ds:    strings.Repeat("x", 101), want: problem.Invalid,
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			st := mustOpenStore(t)
			tt.setup(t, st)
			before := mustCounts(t, st)
			imp, err := st.BeginImport(context.Background(), tt.ds, "UTC", tt.app, "x.csv")
			if err == nil {
				t.Fatalf("BeginImport(%q, append=%v) = %+v, want a %v problem", tt.ds, tt.app, imp, tt.want)
			}
			p := problem.As(err)
			if p == nil || p.Kind != tt.want {
				t.Fatalf("BeginImport(%q, append=%v): err = %v, want a %v problem", tt.ds, tt.app, err, tt.want)
			}
			if got := mustCounts(t, st); got != before {
				t.Fatalf("a refused BeginImport changed the counts from %+v to %+v", before, got)
			}
		})
	}
}

func TestBeginImportNameAtLimit(t *testing.T) {
	st := mustOpenStore(t)
	name := strings.Repeat("x", 100)
	importReady(t, st, name, false, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 1, ""}))
	if _, err := st.DatasetByName(context.Background(), name); err != nil {
		t.Fatalf("a 100-character name: %v", err)
	}
}

func TestDataThrough(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)
	imp := importReady(t, st, "shop", false, batch(t, 0, []string{"C1", "C2"},
		order{0, "2024-01-05", 1, ""}, order{1, "2024-05-03", 2, ""}, order{0, "2024-03-01", 3, ""}))

	get := func() Dataset {
		t.Helper()
		d, err := st.DatasetByID(ctx, imp.DatasetID)
		if err != nil {
			t.Fatal(err)
		}
		return d
	}
	d := get()
	if d.DataThroughSet != nil {
		t.Fatalf("DataThroughSet = %v before any choice, want nil", *d.DataThroughSet)
	}
	if got := d.DataThrough().String(); got != "2024-05-03" {
		t.Fatalf("default DataThrough = %s, want the latest order day 2024-05-03", got)
	}

	steps := []struct {
		name string
		set  string // "" = nil
		want string
	}{
		{"override earlier", "2024-04-30", "2024-04-30"},
		{"override later", "2024-06-30", "2024-06-30"},
		{"back to default", "", "2024-05-03"},
	}
	for _, s := range steps {
		var p *civil.Date
		if s.set != "" {
			v := day(t, s.set)
			p = &v
		}
		if err := st.SetDataThrough(ctx, imp.DatasetID, p); err != nil {
			t.Fatalf("%s: %v", s.name, err)
		}
		d := get()
		if got := d.DataThrough().String(); got != s.want {
			t.Errorf("%s: DataThrough = %s, want %s", s.name, got, s.want)
		}
		if (d.DataThroughSet != nil) != (s.set != "") {
			t.Errorf("%s: DataThroughSet = %v, want set=%v", s.name, d.DataThroughSet, s.set != "")
		}
		if d.LastDay.String() != "2024-05-03" {
			t.Errorf("%s: LastDay = %s, want 2024-05-03 whatever data_through says", s.name, d.LastDay)
		}
	}

	if err := st.SetDataThrough(ctx, imp.DatasetID+100, nil); !problem.Is(err, problem.NotFound) {
		t.Fatalf("SetDataThrough of a missing dataset: err = %v, want NotFound", err)
	}
}

func TestFinishImportTotals(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)

	v1 := importReady(t, st, "shop", false,
		batch(t, 0, []string{"C1", "C2"}, order{0, "2024-02-10", 10, "R1"}, order{1, "2024-02-11", 20, "R2"}),
		batch(t, 2, nil, order{0, "2024-03-01", 30, "R3"}))
	v2 := importReady(t, st, "shop", true,
		batch(t, 2, []string{"C3"}, order{2, "2024-01-05", 5, "R4"}, order{0, "2024-04-01", 7, "R5"}))
	// An append inside the known range keeps the first and last day.
	v3 := importReady(t, st, "shop", true,
		batch(t, 3, nil, order{1, "2024-02-20", 1, "R6"}, order{2, "2024-03-15", 2, "R7"}))
	// An append that adds no order (say all repeats) keeps the days too.
	v4 := begin(t, st, "shop", true)
	if err := st.FinishImport(ctx, v4, ImportStats{RowsRead: 2, RepeatsSkipped: 2}); err != nil {
		t.Fatal(err)
	}

	d, err := st.DatasetByName(ctx, "shop")
	if err != nil {
		t.Fatal(err)
	}
	if d.Version != v4.VersionID || d.Seq != 4 || d.Orders != 7 || d.Customers != 3 ||
		d.FirstDay.String() != "2024-01-05" || d.LastDay.String() != "2024-04-01" {
		t.Fatalf("dataset = %+v, want version 4 with 7 orders, 3 customers, 2024-01-05..2024-04-01", d)
	}
	if !d.CreatedAt.Equal(fixedNow) || d.TimeZone != "UTC" || len(d.Salt) != 16 {
		t.Errorf("dataset created %v, zone %q, salt %d bytes; want %v, UTC, 16", d.CreatedAt, d.TimeZone, len(d.Salt), fixedNow)
	}

	vs, err := st.Versions(ctx, d.ID)
	if err != nil {
		t.Fatal(err)
	}
	type row struct {
		id                               int64
		seq                              int
		kind                             string
		added, total, customers, repeats int
		first, last                      string
	}
	var got []row
	for _, v := range vs {
		got = append(got, row{v.ID, v.Seq, v.Kind, v.OrdersAdded, v.OrdersTotal, v.CustomersTotal, v.RepeatsSkipped, v.FirstDay.String(), v.LastDay.String()})
		if !v.CreatedAt.Equal(fixedNow) || !v.FinishedAt.Equal(fixedNow) {
			t.Errorf("version %d: created %v finished %v, want %v", v.Seq, v.CreatedAt, v.FinishedAt, fixedNow)
		}
		if v.DatasetID != d.ID {
			t.Errorf("version %d: dataset %d, want %d", v.Seq, v.DatasetID, d.ID)
		}
	}
	want := []row{
		{v4.VersionID, 4, "append", 0, 7, 3, 2, "2024-01-05", "2024-04-01"},
		{v3.VersionID, 3, "append", 2, 7, 3, 0, "2024-01-05", "2024-04-01"},
		{v2.VersionID, 2, "append", 2, 5, 3, 0, "2024-01-05", "2024-04-01"},
		{v1.VersionID, 1, "import", 3, 3, 2, 0, "2024-02-10", "2024-03-01"},
	}
	if !slices.Equal(got, want) {
		t.Fatalf("Versions (newest first) =\n%+v\nwant\n%+v", got, want)
	}

	if err := st.FinishImport(ctx, v2, ImportStats{OrdersAdded: 1}); err == nil {
		t.Fatal("finishing a version twice succeeded")
	}
	if d2, _ := st.DatasetByName(ctx, "shop"); d2.Orders != 7 {
		t.Fatalf("a refused second FinishImport changed orders_total to %d", d2.Orders)
	}
}

func TestVersionsOfMissingDatasetIsEmpty(t *testing.T) {
	st := mustOpenStore(t)
	vs, err := st.Versions(context.Background(), 42)
	if err != nil || len(vs) != 0 {
		t.Fatalf("Versions(42) = %+v, %v; want none", vs, err)
	}
}

func TestPragmas(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)
	var mode string
	if err := st.w.QueryRowContext(ctx, `PRAGMA journal_mode`).Scan(&mode); err != nil {
		t.Fatal(err)
	}
	if mode != "wal" {
		t.Errorf("writer journal_mode = %q, want wal", mode)
	}
	checks := []struct {
		name   string
		reader bool
		pragma string
		want   int
	}{
		{"writer foreign_keys", false, "foreign_keys", 1},
		{"writer query_only", false, "query_only", 0},
		{"writer busy_timeout", false, "busy_timeout", 10000},
		{"writer synchronous NORMAL", false, "synchronous", 1},
		{"reader foreign_keys", true, "foreign_keys", 1},
		{"reader query_only", true, "query_only", 1},
	}
	for _, c := range checks {
		db := st.w
		if c.reader {
			db = st.r.DB
		}
		var v int
		if err := db.QueryRowContext(ctx, `PRAGMA `+c.pragma).Scan(&v); err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		if v != c.want {
			t.Errorf("%s = %d, want %d", c.name, v, c.want)
		}
	}
	// The read pool refuses writes.
	if _, err := st.r.ExecContext(ctx, `INSERT INTO schema_migrations (name, applied_at) VALUES ('x', 'y')`); err == nil {
		t.Error("a write through the read-only pool succeeded")
	}
	if got, _ := st.Migrations(ctx); slices.Contains(got, "x") {
		t.Error("the read-only pool wrote a row")
	}
	// Foreign keys really act: deleting a version deletes the customers it
	// added (ON DELETE CASCADE), and deleteVersions takes its orders too
	// (orders carry no foreign-key clause, see 0001_datasets.sql).
	imp := importReady(t, st, "shop", false, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 1, ""}))
	tx, err := st.w.BeginTx(ctx, nil)
	if err != nil {
		t.Fatal(err)
	}
	if n, err := deleteVersions(ctx, tx, `id = ?`, imp.VersionID); err != nil || n != 1 {
		t.Fatalf("deleteVersions = %d, %v; want 1, nil", n, err)
	}
	if err := tx.Commit(); err != nil {
		t.Fatal(err)
	}
	if c := mustCounts(t, st); c.orders != 0 || c.customers != 0 {
		t.Errorf("after deleting the only version counts = %+v, want its orders and customers gone", c)
	}
}

func TestIntegrityCheckAndCheckpoint(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)
	importReady(t, st, "shop", false, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 1, ""}))
	if err := st.Checkpoint(ctx); err != nil {
		t.Fatal(err)
	}
	if v, err := st.IntegrityCheck(ctx); err != nil || v != "ok" {
		t.Fatalf("IntegrityCheck = %q, %v; want ok", v, err)
	}
	if fi, err := os.Stat(st.Path() + "-wal"); err == nil && fi.Size() != 0 {
		t.Errorf("WAL is %d bytes after a TRUNCATE checkpoint, want 0", fi.Size())
	} else if err != nil && !errors.Is(err, fs.ErrNotExist) {
		t.Fatal(err)
	}
}

// A second Store opened on the same file (say `ebb import` while `ebb serve`
// runs) must not destroy an import the first one is still writing.
func TestOpenDoesNotPurgeAnotherStoresRunningImport(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "ebb.db")
	a := openAt(t, path)
	imp := begin(t, a, "shop", false)
	write(t, a, imp, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 1, "R1"}))

	b := openAt(t, path) // purges every loading version it finds
	c := mustCounts(t, b)
	err := a.FinishImport(ctx, imp, statsOf(batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 1, "R1"})))
	if c.versions == 0 || err != nil {
		t.Skipf("BUG: opening a second Store on the same file purged the first one's running import "+
			"(counts seen by the second store %+v; FinishImport: %v)", c, err)
	}
	d, err := b.DatasetByName(ctx, "shop")
	if err != nil || d.Orders != 1 {
		t.Fatalf("dataset after the first store finished = %+v, %v; want 1 order", d, err)
	}
}

// WriteOrders splits a batch into multi-row INSERTs of rowsPerInsert rows
// and one shorter remainder; every row must arrive exactly once.
func TestWriteOrdersBatchSizes(t *testing.T) {
	for _, n := range []int{1, rowsPerInsert - 1, rowsPerInsert, rowsPerInsert + 1, 2*rowsPerInsert + 50} {
		t.Run(strconv.Itoa(n), func(t *testing.T) {
			ctx := context.Background()
			st := mustOpenStore(t)
			var rows []order
			wantSum := 0.0
			for i := range n {
				rows = append(rows, order{int32(i % 3), "2024-01-01", float64(i), "R" + strconv.Itoa(i)})
				wantSum += float64(i)
			}
			imp := importReady(t, st, "shop", false, batch(t, 0, []string{"A", "B", "C"}, rows...))
			refs := map[string]bool{}
			sum := 0.0
			if err := st.EachOrder(ctx, imp.DatasetID, func(c int32, d civil.Date, amount float64, has bool, ref string) {
				refs[ref] = true
				sum += amount
			}); err != nil {
				t.Fatal(err)
			}
			if len(refs) != n || sum != wantSum {
				t.Fatalf("stored %d distinct refs with amounts summing to %v, want %d and %v", len(refs), sum, n, wantSum)
			}
			if d, _ := st.DatasetByID(ctx, imp.DatasetID); d.Orders != n || d.Customers != 3 {
				t.Fatalf("dataset has %d orders, %d customers; want %d, 3", d.Orders, d.Customers, n)
			}
		})
	}
}
