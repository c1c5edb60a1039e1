package analysis_test

import (
	"bytes"
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"ebb/internal/analysis"
	"ebb/internal/civil"
	"ebb/internal/store"
)

// now is the fixed "today" of every request: 2026-12-01 in UTC.
var now = time.Date(2026, 12, 1, 12, 0, 0, 0, time.UTC)

// mustOpenStore returns a migrated store in a fresh temporary directory,
// closed when the test ends.
func mustOpenStore(t testing.TB) *store.Store {
	t.Helper()
	st, err := store.Open(context.Background(), filepath.Join(t.TempDir(), "ebb.db"), store.Options{Now: func() time.Time { return now }})
	if err != nil {
		t.Fatalf("store.Open: %v", err)
	}
	t.Cleanup(func() { st.Close() })
	return st
}

// testdata returns the bytes of testdata/name.
func testdata(t *testing.T, name string) []byte {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("testdata", name))
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// source wraps bytes as an analysis.Source with a known size.
func source(name string, b []byte) analysis.Source {
	return analysis.Source{Name: name, R: bytes.NewReader(b), Size: int64(len(b))}
}

// fileSource is source for a testdata file.
func fileSource(t *testing.T, name string) analysis.Source {
	t.Helper()
	return source(name, testdata(t, name))
}

// request returns a reject-policy import request with the fixed clock.
func request(dataset string, appendTo bool, orders analysis.Source) analysis.ImportRequest {
	return analysis.ImportRequest{Dataset: dataset, Append: appendTo, Orders: orders, Now: now}
}

func mustImport(t *testing.T, st *store.Store, req analysis.ImportRequest) *analysis.ImportResult {
	t.Helper()
	res, err := analysis.Import(context.Background(), st, req)
	if err != nil {
		t.Fatalf("Import(%s into %q, append=%v): %v", req.Orders.Name, req.Dataset, req.Append, err)
	}
	return res
}

type counts struct{ datasets, versions, customers, orders int }

func mustCounts(t *testing.T, st *store.Store) counts {
	t.Helper()
	var c counts
	var err error
	c.datasets, c.versions, c.customers, c.orders, err = st.Counts(context.Background())
	if err != nil {
		t.Fatalf("Counts: %v", err)
	}
	return c
}

func mustDataset(t *testing.T, st *store.Store, name string) store.Dataset {
	t.Helper()
	d, err := st.DatasetByName(context.Background(), name)
	if err != nil {
		t.Fatalf("DatasetByName(%q): %v", name, err)
	}
	return d
}

// figures is the visible summary of a dataset, for one-line comparisons.
type figures struct {
	Seq, Orders, Customers int
	First, Last            string
}

func figuresOf(d store.Dataset) figures {
	return figures{d.Seq, d.Orders, d.Customers, d.FirstDay.String(), d.LastDay.String()}
}

// orderLines lists the visible orders of a dataset as sorted
// "KEY DAY AMOUNT REF" lines (AMOUNT "-" when absent).
func orderLines(t *testing.T, st *store.Store, datasetID int64) []string {
	t.Helper()
	ctx := context.Background()
	keys, err := st.CustomerKeys(ctx, datasetID)
	if err != nil {
		t.Fatal(err)
	}
	var out []string
	err = st.EachOrder(ctx, datasetID, func(c int32, d civil.Date, amount float64, has bool, ref string) {
		a := "-"
		if has {
			a = strconv.FormatFloat(amount, 'f', 2, 64)
		}
		out = append(out, strings.TrimSpace(fmt.Sprintf("%s %s %s %s", keys[c], d, a, ref)))
	})
	if err != nil {
		t.Fatal(err)
	}
	slices.Sort(out)
	return out
}

// storedCustomer is a customers row read straight from the database file;
// Attributes is the stored JSON object re-encoded with sorted keys.
type storedCustomer struct {
	Key, Email, Signup, Attributes string
	Contactable                    bool
}

// customersInDB reads the customers of a dataset directly from the file
// through a separate read-only connection (the store has no reader for
// customer details yet).
func customersInDB(t *testing.T, st *store.Store, datasetID int64) map[string]storedCustomer {
	t.Helper()
	db, err := sql.Open("sqlite", "file:"+st.Path()+"?_pragma=query_only(1)")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	rows, err := db.Query(`SELECT key, COALESCE(email, ''), COALESCE(signup_date, ''), contactable,
		COALESCE(attributes, '') FROM customers WHERE dataset_id = ?`, datasetID)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	out := map[string]storedCustomer{}
	for rows.Next() {
		var c storedCustomer
		if err := rows.Scan(&c.Key, &c.Email, &c.Signup, &c.Contactable, &c.Attributes); err != nil {
			t.Fatal(err)
		}
		if c.Attributes != "" {
			// Canonical form (sorted keys): the stored key order is not part
			// of the contract.
			var m map[string]string
			if err := json.Unmarshal([]byte(c.Attributes), &m); err != nil {
				t.Fatalf("customer %s: attributes %q are not a JSON object of strings: %v", c.Key, c.Attributes, err)
			}
			b, _ := json.Marshal(m)
			c.Attributes = string(b)
		}
		out[c.Key] = c
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	return out
}

// countingReader counts the bytes read through it.
type countingReader struct {
	r io.Reader
	n int64
}

func (c *countingReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	c.n += int64(n)
	return n, err
}

// replaceLine returns b with its (1-based) line n replaced by s.
func replaceLine(t *testing.T, b []byte, n int, s string) []byte {
	t.Helper()
	lines := strings.Split(string(b), "\n")
	if n < 1 || n > len(lines) {
		t.Fatalf("replaceLine: no line %d", n)
	}
	lines[n-1] = s
	return []byte(strings.Join(lines, "\n"))
}

// generatedOrders writes a header and n orders for customers G0000000…,
// with unique refs P…, all in 2023; bad, if not empty, replaces data row
// badAt (1-based).
func generatedOrders(n, customers int, bad string, badAt int) []byte {
	var b bytes.Buffer
	b.Grow(n * 40)
	b.WriteString("customer_id,order_date,amount,order_id\n")
	start := civil.FromYMD(2023, 1, 1)
	for i := 1; i <= n; i++ {
		if i == badAt && bad != "" {
			b.WriteString(bad)
			b.WriteByte('\n')
			continue
		}
		fmt.Fprintf(&b, "G%07d,%s,%d.%02d,P%08d\n", i%customers, start+civil.Date(i%365), i%500, i%100, i)
	}
	return b.Bytes()
}
