package store

import (
	"context"
	"database/sql"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"

	"ebb/internal/civil"
	"ebb/internal/ingest"
)

// appendVersion appends one ready version of n orders by n/10 new
// customers to dataset name, calling after once after each of its three
// transactions (begin, orders, finish) with whether the version is ready.
func appendVersion(ctx context.Context, st *Store, name string, firstNew int32, n int, start civil.Date, after func(ready bool) error) error {
	imp, err := st.BeginImport(ctx, name, "UTC", true, "more.csv")
	if err != nil {
		return err
	}
	if err := after(false); err != nil {
		return err
	}
	b := ingest.Batch{FirstNewID: firstNew}
	for i := range n / 10 {
		b.NewKeys = append(b.NewKeys, fmt.Sprintf("N%d", int(firstNew)+i))
	}
	for i := range n {
		b.Orders = append(b.Orders, ingest.Order{Customer: firstNew + int32(i%(n/10)), Day: start + civil.Date(i%300),
			Amount: float64(i%50) + 0.5, HasAmount: true, Ref: fmt.Sprintf("V%d-%d", imp.Seq, i)})
	}
	if err := st.WriteOrders(ctx, imp, b); err != nil {
		return err
	}
	if err := after(false); err != nil {
		return err
	}
	if err := st.FinishImport(ctx, imp, statsOf(b)); err != nil {
		return err
	}
	return after(true)
}

// rawCounts counts the rows of a database file as it lies on disk, without
// Open (which would purge loading versions first).
func rawCounts(t *testing.T, path string) counts {
	t.Helper()
	db, err := sql.Open("sqlite", "file:"+path+"?mode=ro")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var c counts
	if err := db.QueryRow(`SELECT (SELECT count(*) FROM datasets), (SELECT count(*) FROM versions),
		(SELECT count(*) FROM customers), (SELECT count(*) FROM orders)`).Scan(&c.datasets, &c.versions, &c.customers, &c.orders); err != nil {
		t.Fatalf("count rows of %s: %v", path, err)
	}
	return c
}

// A backup taken while another Store on the same file (as a server beside
// "ebb backup") commits versions holds the database as of one commit: its
// rows equal the counts after one of the writer's transactions, and once
// opened (which purges a version caught loading) the counts after one of
// its finished versions, between the ones before and after Backup ran.
func TestBackupWhileWriting(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	path := filepath.Join(dir, "ebb.db")
	src := openAt(t, path)
	seed := batch(t, 0, nil)
	for c := range 2000 {
		seed.NewKeys = append(seed.NewKeys, fmt.Sprintf("C%d", c))
	}
	start := day(t, "2023-01-01")
	for i := range 40000 {
		seed.Orders = append(seed.Orders, ingest.Order{Customer: int32(i % 2000), Day: start + civil.Date(i%700), Amount: 9.5, HasAmount: true, Ref: fmt.Sprintf("R%d", i)})
	}
	importReady(t, src, "shop", false, seed)

	writer := openAt(t, path)
	var mu sync.Mutex
	all := []counts{mustCounts(t, src)} // after every writer transaction
	ready := []counts{all[0]}           // after every finished version
	record := func(isReady bool) error {
		var c counts
		var err error
		c.datasets, c.versions, c.customers, c.orders, err = writer.Counts(ctx)
		if err != nil {
			return err
		}
		mu.Lock()
		defer mu.Unlock()
		all = append(all, c)
		if isReady {
			ready = append(ready, c)
		}
		return nil
	}
	readyNow := func() int { mu.Lock(); defer mu.Unlock(); return len(ready) }

	stop := make(chan struct{})
	firstDone := make(chan struct{})
	werr := make(chan error, 1)
	go func() {
		next := int32(2000)
		for v := 0; ; v++ {
			if err := appendVersion(ctx, writer, "shop", next, 500, start+civil.Date(v), record); err != nil {
				werr <- err
				return
			}
			next += 50
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
	<-firstDone
	before := readyNow() - 1
	out := filepath.Join(dir, "copy.db")
	err := src.Backup(ctx, out)
	after := readyNow() - 1
	close(stop)
	if werr := <-werr; werr != nil {
		t.Fatalf("writer: %v", werr)
	}
	if err != nil {
		t.Fatalf("Backup(%s) while writing: %v", out, err)
	}
	t.Logf("the writer finished %d versions while Backup ran; %d transactions in all", after-before, len(all)-1)

	raw := rawCounts(t, out)
	if !slices.Contains(all, raw) {
		t.Errorf("backup rows = %+v, not the state after any committed transaction: %+v", raw, all)
	}
	cp := openAt(t, out)
	if v, err := cp.IntegrityCheck(ctx); err != nil || v != "ok" {
		t.Errorf("IntegrityCheck of the backup = %q, %v; want ok", v, err)
	}
	got := mustCounts(t, cp)
	i := slices.Index(ready, got)
	if i < before || i > after {
		t.Errorf("opened backup counts = %+v (finished version %d), want those after one of finished versions %d to %d: %+v",
			got, i, before, after, ready[before:after+1])
	}
	// Each ready version's recorded total matches the orders the copy holds.
	d, err := cp.DatasetByName(ctx, "shop")
	if err != nil {
		t.Fatal(err)
	}
	vs, err := cp.Versions(ctx, d.ID)
	if err != nil {
		t.Fatal(err)
	}
	if len(vs) == 0 || vs[0].OrdersTotal != got.orders || vs[0].CustomersTotal != got.customers {
		t.Errorf("latest version of the backup = %+v, want orders_total %d and customers_total %d", vs[0], got.orders, got.customers)
	}
	assertOnly(t, dir, "copy.db", "copy.db-shm", "copy.db-wal", "copy.db.lock", "ebb.db", "ebb.db-shm", "ebb.db-wal", "ebb.db.lock")
}

// assertOnly fails unless dir holds no files besides names: a backup leaves
// no temporary file behind.
func assertOnly(t *testing.T, dir string, names ...string) {
	t.Helper()
	ents, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range ents {
		if !slices.Contains(names, e.Name()) {
			t.Errorf("%s holds %s; want only %v", dir, e.Name(), names)
		}
	}
}

func TestBackupRefusesAndLeavesNothing(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	st := openAt(t, filepath.Join(dir, "ebb.db"))
	importReady(t, st, "shop", false, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 1, "R1"}))
	existing := filepath.Join(dir, "old.db")
	if err := os.WriteFile(existing, []byte("last week's backup"), 0o600); err != nil {
		t.Fatal(err)
	}
	cancelled, cancel := context.WithCancel(ctx)
	cancel()

	tests := []struct {
		name    string
		ctx     context.Context
		path    string
		wantErr string
	}{
		{"an existing file", ctx, existing, "exists already"},
		{"a folder that does not exist", ctx, filepath.Join(dir, "no", "such", "x.db"), "no such file or directory"},
		{"a cancelled backup", cancelled, filepath.Join(dir, "new.db"), "backup " + filepath.Join(dir, "new.db")},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := st.Backup(tt.ctx, tt.path)
			if err == nil || !strings.Contains(err.Error(), tt.wantErr) {
				t.Fatalf("Backup(%s) = %v, want an error containing %q", tt.path, err, tt.wantErr)
			}
			if !strings.HasPrefix(err.Error(), "backup "+tt.path+": ") {
				t.Errorf("Backup(%s) = %q, want it to start with \"backup %s: \"", tt.path, err, tt.path)
			}
			if b, err := os.ReadFile(existing); err != nil || string(b) != "last week's backup" {
				t.Errorf("existing file = %q, %v; want it untouched", b, err)
			}
			assertOnly(t, dir, "ebb.db", "ebb.db-shm", "ebb.db-wal", "ebb.db.lock", "old.db")
		})
	}
}

// checkCopy must reject a copy SQLite finds damaged, so that Backup never
// names a bad file as a backup.
func TestCheckCopyFindsDamage(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	st := openAt(t, filepath.Join(dir, "ebb.db"))
	b := batch(t, 0, []string{"C1", "C2"})
	for i := range 3000 {
		b.Orders = append(b.Orders, ingest.Order{Customer: int32(i % 2), Day: day(t, "2024-01-01") + civil.Date(i%90), Ref: fmt.Sprintf("R%d", i)})
	}
	importReady(t, st, "shop", false, b)
	good := filepath.Join(dir, "good.db")
	if err := st.Backup(ctx, good); err != nil {
		t.Fatal(err)
	}
	if err := checkCopy(ctx, good); err != nil {
		t.Fatalf("checkCopy of a fresh backup: %v", err)
	}

	// Damage the last page of the copy (order rows, far from the schema
	// on page 1, so the file still opens) and check again.
	body, err := os.ReadFile(good)
	if err != nil {
		t.Fatal(err)
	}
	const page = 4096
	if len(body) < 4*page {
		t.Fatalf("backup is %d bytes, want several pages", len(body))
	}
	last := len(body) - page
	for i := last + 8; i < len(body); i += 7 {
		body[i] ^= 0x5a
	}
	bad := filepath.Join(dir, "bad.db")
	if err := os.WriteFile(bad, body, 0o600); err != nil {
		t.Fatal(err)
	}
	if err := checkCopy(ctx, bad); err == nil {
		t.Fatal("checkCopy of a damaged copy = nil, want an error")
	} else {
		t.Logf("checkCopy of a damaged copy: %v", err)
	}
}
