package main

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"ebb/internal/civil"
	"ebb/internal/ingest"
	"ebb/internal/store"
)

// ordersCSV is an order file of n orders by n/5 customers named
// PREFIX0, PREFIX1, … with references PREFIX-R0, PREFIX-R1, ….
func ordersCSV(prefix string, n int) string {
	var b strings.Builder
	b.WriteString("customer_id,order_date,amount,order_id\n")
	start := time.Date(2024, 1, 1, 0, 0, 0, 0, time.UTC)
	for i := range n {
		fmt.Fprintf(&b, "%s%d,%s,%d.25,%s-R%d\n", prefix, i%(n/5), start.AddDate(0, 0, i%400).Format("2006-01-02"), i%90, prefix, i)
	}
	return b.String()
}

// "ebb backup" while another connection (here the test, as a server would)
// appends versions: the copy opens, passes the integrity check and holds
// the database as of one finished append between the ones before and after
// the command ran.
func TestBackupCommandWhileWriting(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	db := filepath.Join(dir, "ebb.db")
	if r := runCLI(t, nil, "import", "--db", db, "--dataset", "shop", writeFile(t, dir, "orders.csv", ordersCSV("C", 60000))); r.err != nil {
		t.Fatalf("import: %v\n%s", r.err, r.stderr)
	}

	writer, err := store.Open(ctx, db, store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer writer.Close()
	var mu sync.Mutex
	ready := [][4]int{counts(t, db)} // after each finished append
	stop, firstDone, werr := make(chan struct{}), make(chan struct{}), make(chan error, 1)
	go func() {
		// Each append goes through the store's import calls directly,
		// three short transactions, so that many commit while the
		// backup copies.
		next := int32(12000)
		for v := 0; ; v++ {
			imp, err := writer.BeginImport(ctx, "shop", "", true, "more.csv")
			if err != nil {
				werr <- fmt.Errorf("append %d: %w", v, err)
				return
			}
			b := ingest.Batch{FirstNewID: next, NewKeys: []string{fmt.Sprintf("V%d", v)}}
			for i := range 200 {
				b.Orders = append(b.Orders, ingest.Order{Customer: next, Day: civil.FromYMD(2025, 1, 1) + civil.Date(i), Ref: fmt.Sprintf("V%d-%d", v, i)})
			}
			if err := writer.WriteOrders(ctx, imp, b); err != nil {
				werr <- fmt.Errorf("append %d: %w", v, err)
				return
			}
			if err := writer.FinishImport(ctx, imp, store.ImportStats{RowsRead: 200, OrdersAdded: 200, CustomersAdded: 1,
				FirstDay: b.Orders[0].Day, LastDay: b.Orders[199].Day}); err != nil {
				werr <- fmt.Errorf("append %d: %w", v, err)
				return
			}
			next++
			d, ver, c, o, err := writer.Counts(ctx)
			if err != nil {
				werr <- err
				return
			}
			mu.Lock()
			ready = append(ready, [4]int{d, ver, c, o})
			mu.Unlock()
			if v == 0 {
				close(firstDone)
			}
			select {
			case <-stop:
				werr <- nil
				return
			default:
			}
		}
	}()
	finished := func() int { mu.Lock(); defer mu.Unlock(); return len(ready) - 1 }
	select {
	case <-firstDone:
	case err := <-werr:
		t.Fatalf("writer: %v", err)
	}
	out := filepath.Join(dir, "backup.db")
	before := finished()
	r := runCLI(t, nil, "backup", "--db", db, "--out", out)
	after := finished()
	close(stop)
	if err := <-werr; err != nil {
		t.Fatalf("writer: %v", err)
	}
	if r.err != nil {
		t.Fatalf("backup while writing: %v\n%s", r.err, r.stderr)
	}
	if want := fmt.Sprintf("backed up %s to %s\n", db, out); r.stdout != want {
		t.Errorf("stdout = %q, want %q", r.stdout, want)
	}
	t.Logf("%d appends finished while the backup ran", after-before)

	cp, err := store.Open(ctx, out, store.Options{})
	if err != nil {
		t.Fatalf("open the backup: %v", err)
	}
	defer cp.Close()
	if v, err := cp.IntegrityCheck(ctx); err != nil || v != "ok" {
		t.Errorf("IntegrityCheck of the backup = %q, %v; want ok", v, err)
	}
	d, ver, c, o, err := cp.Counts(ctx)
	if err != nil {
		t.Fatal(err)
	}
	got := [4]int{d, ver, c, o}
	if i := slices.Index(ready, got); i < before || i > after {
		t.Errorf("backup counts (datasets, versions, customers, orders) = %v, want those after one of appends %d to %d: %v",
			got, before, after, ready[before:after+1])
	}
	ds, err := cp.DatasetByName(ctx, "shop")
	if err != nil {
		t.Fatal(err)
	}
	if ds.Orders != o || ds.Customers != c {
		t.Errorf("backup's latest version records %d orders and %d customers; the copy holds %d and %d", ds.Orders, ds.Customers, o, c)
	}
}

func TestBackupCommandErrors(t *testing.T) {
	dir := t.TempDir()
	db := filepath.Join(dir, "ebb.db")
	if r := runCLI(t, nil, "import", "--db", db, "--dataset", "shop", writeFile(t, dir, "orders.csv", ordersCSV("C", 50))); r.err != nil {
		t.Fatalf("import: %v\n%s", r.err, r.stderr)
	}
	old := writeFile(t, dir, "old.db", "last week's backup")
	missing := filepath.Join(dir, "typo.db")

	tests := []struct {
		name    string
		env     map[string]string
		args    []string
		wantErr string
	}{
		{"existing output", nil, []string{"--db", db, "--out", old}, "backup " + old + ": the file exists already"},
		{"missing database", nil, []string{"--db", missing, "--out", filepath.Join(dir, "a.db")}, "backup: there is no database " + missing + " (check --db)"},
		{"database is a folder", nil, []string{"--db", dir, "--out", filepath.Join(dir, "b.db")}, "is a folder, not a database file"},
		{"not a database", nil, []string{"--db", old, "--out", filepath.Join(dir, "c.db")}, "file is not a database"},
		{"no output", nil, []string{"--db", db}, "backup: --out FILE is required"},
		{"output folder missing", nil, []string{"--db", db, "--out", filepath.Join(dir, "no", "d.db")}, "no such file or directory"},
		{"extra argument", nil, []string{"--db", db, "--out", filepath.Join(dir, "e.db"), "now"}, `unexpected argument "now"`},
		{"existing output from the environment", map[string]string{"EBB_DB": db, "EBB_OUT": old}, nil, "the file exists already"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r := runCLI(t, tt.env, append([]string{"backup"}, tt.args...)...)
			if r.err == nil || !strings.Contains(r.err.Error(), tt.wantErr) {
				t.Fatalf("ebb backup %v = %v, want an error containing %q", tt.args, r.err, tt.wantErr)
			}
			if b, err := os.ReadFile(old); err != nil || string(b) != "last week's backup" {
				t.Errorf("existing file = %q, %v; want it untouched", b, err)
			}
			if _, err := os.Stat(missing); err == nil {
				t.Errorf("ebb backup created %s", missing)
			}
			ents, _ := os.ReadDir(dir)
			for _, e := range ents {
				if !slices.Contains([]string{"ebb.db", "ebb.db-wal", "ebb.db-shm", "ebb.db.lock", "orders.csv", "old.db", "old.db.lock"}, e.Name()) {
					t.Errorf("ebb backup left %s behind", e.Name())
				}
			}
		})
	}

	// The flags come from the environment too, and a backup restores: the
	// copy opened in the original's place holds the same rows.
	out := filepath.Join(dir, "env.db")
	if r := runCLI(t, map[string]string{"EBB_DB": db, "EBB_OUT": out}, "backup"); r.err != nil {
		t.Fatalf("backup with EBB_DB and EBB_OUT: %v", r.err)
	}
	if got, want := counts(t, out), counts(t, db); got != want || got != [4]int{1, 1, 10, 50} {
		t.Errorf("backup counts = %v, original %v; want both [1 1 10 50]", got, want)
	}
}
