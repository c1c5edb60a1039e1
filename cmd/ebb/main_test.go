package main

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"net"
	"net/http"
	"net/url"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"ebb/demo/replay"
	"ebb/internal/store"
)

type result struct {
	err            error
	stdout, stderr string
}

func runCLI(t *testing.T, envv map[string]string, args ...string) result {
	t.Helper()
	var out, errb bytes.Buffer
	err := run(context.Background(), args, func(k string) string { return envv[k] }, &out, &errb)
	return result{err, out.String(), errb.String()}
}

func writeFile(t *testing.T, dir, name, body string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func counts(t *testing.T, db string) [4]int {
	t.Helper()
	st, err := store.Open(context.Background(), db, store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	d, v, c, o, err := st.Counts(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	return [4]int{d, v, c, o}
}

func TestImportCommand(t *testing.T) {
	dir := t.TempDir()
	db := filepath.Join(dir, "ebb.db")
	good := writeFile(t, dir, "orders.csv", "customer_id,order_date,amount,order_id\nA,2024-01-01,10,R1\nB,2024-01-02,5,R2\nA,2024-02-01,7.5,R3\n")
	more := writeFile(t, dir, "more.csv", "customer_id,order_date,amount,order_id\nA,2024-01-01,10,R1\nC,2024-03-01,1,R4\n")
	broken := writeFile(t, dir, "broken.csv", "customer_id,order_date,amount,order_id\nD,2024-01-01,10,R9\nE,14/03/2024,5,R10\nF,2024-01-03,ten,R11\n")

	r := runCLI(t, nil, "import", "--db", db, "--dataset", "shop", good)
	if r.err != nil {
		t.Fatalf("import: %v\n%s", r.err, r.stderr)
	}
	if want := `imported orders.csv as version 1 of dataset "shop": 3 orders from 2024-01-01 to 2024-02-01, 2 new customers`; strings.TrimSpace(r.stdout) != want {
		t.Errorf("stdout = %q, want %q", r.stdout, want)
	}
	if got := counts(t, db); got != [4]int{1, 1, 2, 3} {
		t.Errorf("counts = %v, want [1 1 2 3]", got)
	}

	r = runCLI(t, nil, "import", "--db", db, "--dataset", "shop", more)
	if r.err == nil || !strings.Contains(r.err.Error(), "exists already") {
		t.Errorf("import into an existing name without --append: err = %v", r.err)
	}

	// The database comes from the environment this time.
	r = runCLI(t, map[string]string{"EBB_DB": db}, "import", "--dataset", "shop", "--append", more)
	if r.err != nil {
		t.Fatalf("append: %v\n%s", r.err, r.stderr)
	}
	if !strings.Contains(r.stdout, "1 orders from 2024-03-01 to 2024-03-01, 1 new customers; 1 rows already stored were left out (first on line 2)") {
		t.Errorf("append stdout = %q", r.stdout)
	}
	if got := counts(t, db); got != [4]int{1, 2, 3, 4} {
		t.Errorf("counts after append = %v, want [1 2 3 4]", got)
	}

	before := counts(t, db)
	r = runCLI(t, nil, "import", "--db", db, "--dataset", "other", broken)
	if r.err == nil {
		t.Fatal("a broken file was accepted")
	}
	wantLines := []string{
		`broken.csv:3:2: column order_date: "14/03/2024" is not an ISO 8601 date (YYYY-MM-DD); it looks like a day-first or month-first date, so choose one of those explicitly`,
		`broken.csv:4:3: column amount: "ten" is not a number (want e.g. 12.50, without a currency sign)`,
	}
	if got := strings.Split(strings.TrimSpace(r.stderr), "\n"); strings.Join(got, "\n") != strings.Join(wantLines, "\n") {
		t.Errorf("stderr =\n%s\nwant\n%s", r.stderr, strings.Join(wantLines, "\n"))
	}
	if want := "broken.csv was not imported: 2 problems; the database is unchanged"; r.err.Error() != want {
		t.Errorf("err = %q, want %q", r.err, want)
	}
	if after := counts(t, db); after != before {
		t.Errorf("a rejected import changed counts from %v to %v", before, after)
	}

	// The same file, day-first and skipping bad rows, with a report.
	report := filepath.Join(dir, "report.csv")
	r = runCLI(t, nil, "import", "--db", db, "--dataset", "other", "--day-first", "--on-error", "skip", "--report", report, broken)
	if r.err != nil {
		t.Fatalf("skip: %v", r.err)
	}
	if !strings.Contains(r.stdout, "2 orders from 2024-01-01 to 2024-03-14") || !strings.Contains(r.stdout, "1 bad rows skipped") {
		t.Errorf("skip stdout = %q", r.stdout)
	}
	rep, _ := os.ReadFile(report)
	if want := "file,line,column_number,column,problem\nbroken.csv,4,3,amount,\"\"\"ten\"\" is not a number (want e.g. 12.50, without a currency sign)\"\n"; string(rep) != want {
		t.Errorf("report =\n%s\nwant\n%s", rep, want)
	}
}

func TestFlagErrors(t *testing.T) {
	tests := []struct {
		name string
		env  map[string]string
		args []string
		want string
	}{
		{"unknown command", nil, []string{"fly"}, `unknown command "fly"`},
		{"unknown flag", nil, []string{"import", "--nope"}, "flag provided but not defined: -nope"},
		{"no file", nil, []string{"import", "--dataset", "x"}, "give exactly one order file"},
		{"no dataset", nil, []string{"import", "a.csv"}, "--dataset NAME is required"},
		{"bad policy", nil, []string{"import", "--dataset", "x", "--on-error", "maybe", "a.csv"}, `unknown error policy "maybe"`},
		{"bad env", map[string]string{"EBB_APPEND": "perhaps"}, []string{"import", "--dataset", "x", "a.csv"}, "environment variable EBB_APPEND"},
		{"both date orders", nil, []string{"import", "--dataset", "x", "--day-first", "--month-first", "a.csv"}, "not both"},
		{"bad map", nil, []string{"import", "--dataset", "x", "--map", "shoe=size", "a.csv"}, `unknown field "shoe"`},
		{"demo without out", nil, []string{"demo"}, "--out DIR is required"},
		{"missing file", nil, []string{"import", "--dataset", "x", "/no/such/file.csv"}, "no such file"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r := runCLI(t, tt.env, tt.args...)
			if r.err == nil || !strings.Contains(r.err.Error(), tt.want) {
				t.Errorf("err = %v, want it to contain %q", r.err, tt.want)
			}
		})
	}
}

func TestHelp(t *testing.T) {
	r := runCLI(t, nil, "help")
	if r.err != nil || !strings.Contains(r.stdout, "serve") || !strings.Contains(r.stdout, "import") || !strings.Contains(r.stdout, "EBB_DB") {
		t.Errorf("help: %v\n%s", r.err, r.stdout)
	}
	for _, args := range [][]string{{"import", "--help"}, {"help", "import"}} {
		r := runCLI(t, nil, args...)
		for _, want := range []string{"--db FILE", "[EBB_DB]", "--on-error POLICY", "(default reject)", "--day-first"} {
			if r.err != nil || !strings.Contains(r.stdout, want) {
				t.Errorf("%v: lacks %q: %v\n%s", args, want, r.err, r.stdout)
			}
		}
	}
	r = runCLI(t, nil, "serve", "--help")
	if !strings.Contains(r.stdout, "--addr HOST:PORT") || !strings.Contains(r.stdout, "(default 127.0.0.1:8080)") {
		t.Errorf("serve --help:\n%s", r.stdout)
	}
}

func TestDemoCommand(t *testing.T) {
	dir := t.TempDir()
	r := runCLI(t, nil, "demo", "--out", dir, "--seed", "7", "--size", "300")
	if r.err != nil {
		t.Fatal(r.err)
	}
	orders, err := os.ReadFile(filepath.Join(dir, "orders.csv"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(string(orders), "customer_id,order_date,amount,order_id\n") {
		t.Errorf("orders.csv starts %q", string(orders[:40]))
	}
	customers, _ := os.ReadFile(filepath.Join(dir, "customers.csv"))
	if !strings.HasPrefix(string(customers), "customer_id,email,signup_date,contactable") {
		t.Errorf("customers.csv starts %q", string(customers[:40]))
	}
	// The files it writes import cleanly.
	db := filepath.Join(dir, "d.db")
	r = runCLI(t, nil, "import", "--db", db, "--dataset", "d", "--customers", filepath.Join(dir, "customers.csv"), filepath.Join(dir, "orders.csv"))
	if r.err != nil || !strings.Contains(r.stdout, "300 new customers") {
		t.Errorf("import of demo files: %v %s", r.err, r.stdout)
	}
}

// TestServeDemo starts the real server with --demo twice on the same
// database: the first start loads the demo, the second changes nothing;
// both print the setup link (no administrator yet) and the demo users'
// passwords, which sign in.
func TestServeDemo(t *testing.T) {
	db := filepath.Join(t.TempDir(), "serve.db")
	var passwords []string
	for i, want := range []string{"loaded the demo dataset", "already loaded"} {
		ln, err := net.Listen("tcp", "127.0.0.1:0")
		if err != nil {
			t.Fatal(err)
		}
		addr := ln.Addr().String()
		ln.Close()
		ctx, cancel := context.WithCancel(context.Background())
		var out, errb syncBuffer
		done := make(chan error, 1)
		go func() {
			done <- run(ctx, []string{"serve", "--demo", "--addr", addr, "--db", db}, func(string) string { return "" }, &out, &errb)
		}()
		up := false
		for deadline := time.Now().Add(60 * time.Second); time.Now().Before(deadline); time.Sleep(50 * time.Millisecond) {
			if res, err := http.Get("http://" + addr + "/healthz"); err == nil {
				res.Body.Close()
				up = res.StatusCode == 200
				break
			}
		}
		if !up {
			cancel()
			<-done
			t.Fatalf("start %d: /healthz never answered 200\n%s", i+1, errb.String())
		}
		text := out.String()
		pw := between(text, "sign in as demo-analyst with password ", "\n")
		passwords = append(passwords, pw)
		client := &http.Client{CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
		res, err := client.PostForm("http://"+addr+"/signin", url.Values{"name": {"demo-analyst"}, "password": {pw}})
		if err != nil || res.StatusCode != http.StatusSeeOther {
			t.Errorf("start %d: demo-analyst cannot sign in with the printed password %q: %v %v", i+1, pw, err, res)
		}
		health := runCLI(t, nil, "health", "--addr", addr)
		cancel()
		if health.err != nil || health.stdout != "ok\n" {
			t.Errorf("start %d: ebb health = %v %q", i+1, health.err, health.stdout)
		}
		if err := <-done; err != nil {
			t.Fatalf("start %d: serve returned %v\n%s", i+1, err, errb.String())
		}
		for _, w := range []string{want, "ebb is serving http://" + addr, "no administrator yet: create one at http://" + addr + "/setup/", "sign in as demo-viewer with password "} {
			if !strings.Contains(text, w) {
				t.Errorf("start %d: stdout lacks %q:\n%s", i+1, w, text)
			}
		}
	}
	if passwords[0] == "" || passwords[0] != passwords[1] {
		t.Errorf("demo passwords %q, want the same non-empty one at every start", passwords)
	}
	// The demo's past is imported in rounds: one version for the data up
	// to each weekly list and one for the rest; a second start adds none.
	versions := len(replay.ListDates) + 1
	if got := counts(t, db); got[0] != 1 || got[1] != versions {
		t.Errorf("after two starts: %d datasets, %d versions; want 1 and %d", got[0], got[1], versions)
	}
}

func TestServeRefusesBadSettings(t *testing.T) {
	db := filepath.Join(t.TempDir(), "s.db")
	tests := []struct {
		name string
		env  map[string]string
		args []string
		want string
	}{
		{"short session key", map[string]string{"EBB_SESSION_KEY": "abcd"}, nil, "session key has 2 bytes; want 32 or 64"},
		{"non-hex session key", nil, []string{"--session-key", "zz"}, "session key is not hex"},
		{"bad idle", nil, []string{"--session-idle", "soon"}, "--session-idle"},
		{"zero upload", nil, []string{"--max-upload", "0"}, "--max-upload"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r := runCLI(t, tt.env, append([]string{"serve", "--db", db, "--addr", "127.0.0.1:0"}, tt.args...)...)
			if r.err == nil || !strings.Contains(r.err.Error(), tt.want) {
				t.Errorf("err = %v, want it to contain %q", r.err, tt.want)
			}
		})
	}
}

// syncBuffer is a bytes.Buffer safe for one writer and one reader.
type syncBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *syncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *syncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

func between(s, from, to string) string {
	_, rest, ok := strings.Cut(s, from)
	if !ok {
		return ""
	}
	v, _, _ := strings.Cut(rest, to)
	return v
}

func TestWindowCommand(t *testing.T) {
	dir := t.TempDir()
	db := filepath.Join(dir, "w.db")
	if r := runCLI(t, nil, "demo", "--out", dir); r.err != nil {
		t.Fatal(r.err)
	}
	if r := runCLI(t, nil, "import", "--db", db, "--dataset", "demo", filepath.Join(dir, "orders.csv")); r.err != nil {
		t.Fatal(r.err)
	}
	r := runCLI(t, nil, "window", "--db", db, "--dataset", "demo", "--method", "censored", "--json")
	if r.err != nil {
		t.Fatalf("window: %v\n%s", r.err, r.stdout)
	}
	var out struct {
		Days                 int     `json:"days"`
		Value                float64 `json:"value"`
		Method               string  `json:"method"`
		Percentile           float64 `json:"percentile"`
		CustomersUsed        int     `json:"customers_used"`
		SingleOrderCustomers int     `json:"single_order_customers"`
		Sensitivity          []struct {
			Days                  int     `json:"days"`
			LapsedShare           float64 `json:"lapsed_share"`
			ReturnAfterLapseShare float64 `json:"return_after_lapse_share"`
		} `json:"sensitivity"`
	}
	if err := json.Unmarshal([]byte(r.stdout), &out); err != nil {
		t.Fatalf("--json output is not JSON: %v\n%s", err, r.stdout)
	}
	if out.Method != "censored" || out.Percentile != 90 || out.Days != int(math.Ceil(out.Value)) || out.Days < 1 ||
		out.CustomersUsed == 0 || out.SingleOrderCustomers == 0 {
		t.Errorf("window = %+v", out)
	}
	if len(out.Sensitivity) != 365 || out.Sensitivity[0].Days != 1 || out.Sensitivity[364].Days != 365 {
		t.Fatalf("sensitivity has %d rows", len(out.Sensitivity))
	}
	for i := 1; i < len(out.Sensitivity); i++ {
		// A longer window can only lapse fewer customers today.
		if out.Sensitivity[i].LapsedShare > out.Sensitivity[i-1].LapsedShare {
			t.Fatalf("lapsed share rises from X=%d to X=%d", i, i+1)
		}
	}
	r = runCLI(t, nil, "window", "--db", db, "--dataset", "demo", "--save", "--days", "90", "--note", "a quarter of a year")
	if r.err != nil || !strings.Contains(r.stdout, "saved churn definition 1: X = 90 days, H = 90 days") {
		t.Errorf("window --save: %v\n%s", r.err, r.stdout)
	}
	if r := runCLI(t, nil, "window", "--db", db, "--dataset", "demo", "--days", "90"); r.err == nil || !strings.Contains(r.err.Error(), "need --save") {
		t.Errorf("--days without --save: %v", r.err)
	}
	if r := runCLI(t, nil, "window", "--db", db, "--dataset", "nope"); r.err == nil || !strings.Contains(r.err.Error(), `there is no dataset "nope"`) {
		t.Errorf("unknown dataset: %v", r.err)
	}
}

func TestTrainAndModelCommands(t *testing.T) {
	dir := t.TempDir()
	db := filepath.Join(dir, "t.db")
	if r := runCLI(t, nil, "demo", "--out", dir); r.err != nil {
		t.Fatal(r.err)
	}
	if r := runCLI(t, nil, "import", "--db", db, "--dataset", "demo", filepath.Join(dir, "orders.csv")); r.err != nil {
		t.Fatal(r.err)
	}
	if r := runCLI(t, nil, "train", "--db", db, "--dataset", "demo"); r.err == nil || !strings.Contains(r.err.Error(), "no churn definition yet") {
		t.Fatalf("train without a definition: %v", r.err)
	}
	if r := runCLI(t, nil, "window", "--db", db, "--dataset", "demo", "--save", "--days", "90", "--note", "a quarter"); r.err != nil {
		t.Fatal(r.err)
	}
	rows := filepath.Join(dir, "test-rows.csv")
	r := runCLI(t, nil, "train", "--db", db, "--dataset", "demo", "--models", "baseline,logistic", "--bootstrap", "50", "--json", "--test-rows", rows)
	if r.err != nil {
		t.Fatalf("train: %v\n%s", r.err, r.stdout)
	}
	var out struct {
		Models []struct {
			ID               int64   `json:"id"`
			Name             string  `json:"name"`
			AUC              float64 `json:"roc_auc"`
			Low              float64 `json:"roc_auc_low"`
			High             float64 `json:"roc_auc_high"`
			AveragePrecision float64 `json:"average_precision"`
			Brier            float64 `json:"brier"`
			TestRows         int     `json:"test_rows"`
			Positives        int     `json:"positives"`
		} `json:"models"`
		InUse   int64              `json:"in_use"`
		Seconds map[string]float64 `json:"seconds"`
	}
	if err := json.Unmarshal([]byte(r.stdout), &out); err != nil {
		t.Fatalf("--json: %v\n%s", err, r.stdout)
	}
	if len(out.Models) != 2 {
		t.Fatalf("models = %+v", out.Models)
	}
	for _, m := range out.Models {
		if m.AUC <= 0.5 || m.AUC >= 1 || m.Low > m.AUC || m.High < m.AUC || m.TestRows == 0 || m.Positives == 0 || m.Positives >= m.TestRows ||
			m.Brier <= 0 || m.Brier >= 0.25+0.05 || m.AveragePrecision <= 0 {
			t.Errorf("model %+v is not a plausible evaluation", m)
		}
	}
	// The first trained set marks its best non-baseline model in use.
	ids := map[string]int64{}
	for _, m := range out.Models {
		ids[m.Name] = m.ID
	}
	if out.InUse == 0 || out.InUse != ids["logistic"] {
		t.Errorf("in use = %d, models %+v; want the logistic model in use", out.InUse, out.Models)
	}
	if len(out.Seconds) == 0 {
		t.Error("no stage timings")
	}
	csvRows, err := os.ReadFile(rows)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(csvRows)), "\n")
	if lines[0] != "customer_id,snapshot_date,label,baseline,logistic" || len(lines)-1 != out.Models[0].TestRows || !strings.HasPrefix(lines[1], "C") {
		t.Errorf("test rows: header %q, %d rows (want %d), first %q", lines[0], len(lines)-1, out.Models[0].TestRows, lines[1])
	}
	base := ids["baseline"]
	if r := runCLI(t, nil, "model", "use", "--db", db, strconv.FormatInt(base, 10)); r.err != nil {
		t.Fatal(r.err)
	}
	r = runCLI(t, nil, "model", "list", "--db", db, "--dataset", "demo", "--json")
	var list []struct {
		ID    int64 `json:"id"`
		InUse bool  `json:"in_use"`
	}
	if err := json.Unmarshal([]byte(r.stdout), &list); err != nil || len(list) != 2 {
		t.Fatalf("model list: %v %s", err, r.stdout)
	}
	for _, m := range list {
		if m.InUse != (m.ID == base) {
			t.Errorf("after model use %d: model %d in use = %v", base, m.ID, m.InUse)
		}
	}
	// Rolling-origin folds need room for several embargoed periods: a
	// 30-day horizon on the demo's three years leaves it.
	if r := runCLI(t, nil, "window", "--db", db, "--dataset", "demo", "--save", "--days", "60", "--horizon", "30", "--note", "short"); r.err != nil {
		t.Fatal(r.err)
	}
	r = runCLI(t, nil, "train", "--db", db, "--dataset", "demo", "--bootstrap", "20", "--folds", "2")
	if r.err != nil || !strings.Contains(r.stdout, "earlier fold, test ") || !strings.Contains(r.stdout, "logistic ROC AUC 0.") {
		t.Errorf("train --folds 2: %v\n%s", r.err, r.stdout)
	}
	if r := runCLI(t, nil, "train", "--db", db, "--dataset", "demo", "--bootstrap", "20", "--calibration", "isotonic"); r.err != nil {
		t.Errorf("train --calibration isotonic: %v", r.err)
	}
	if r := runCLI(t, nil, "train", "--db", db, "--dataset", "demo", "--calibration", "magic"); r.err == nil || !strings.Contains(r.err.Error(), `unknown calibration "magic"`) {
		t.Errorf("train --calibration magic: %v", r.err)
	}
}
