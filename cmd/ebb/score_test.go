package main

import (
	"encoding/csv"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// ebb score drafts a list, writes the customers to contact and the
// holdout, and refuses bad input with a sentence.
func TestScoreCommand(t *testing.T) {
	dir := t.TempDir()
	db := filepath.Join(dir, "s.db")
	for _, args := range [][]string{
		{"demo", "--out", dir},
		{"import", "--db", db, "--dataset", "demo", "--customers", filepath.Join(dir, "customers.csv"), filepath.Join(dir, "orders.csv")},
		{"window", "--db", db, "--dataset", "demo", "--save", "--days", "90", "--note", "a quarter"},
	} {
		if r := runCLI(t, nil, args...); r.err != nil {
			t.Fatalf("%v: %v\n%s", args, r.err, r.stdout)
		}
	}
	out, hold := filepath.Join(dir, "list.csv"), filepath.Join(dir, "holdout.csv")
	if r := runCLI(t, nil, "score", "--db", db, "--dataset", "demo", "--size", "200", "--out", out); r.err == nil || !strings.Contains(r.err.Error(), "no model in use") {
		t.Fatalf("score before training: %v", r.err)
	}
	if r := runCLI(t, nil, "train", "--db", db, "--dataset", "demo", "--models", "baseline,logistic", "--bootstrap", "20"); r.err != nil {
		t.Fatal(r.err)
	}
	r := runCLI(t, nil, "score", "--db", db, "--dataset", "demo", "--size", "200", "--holdout", "0.2", "--out", out, "--holdout-out", hold, "--publish")
	if r.err != nil {
		t.Fatalf("score: %v", r.err)
	}
	if !strings.Contains(r.stdout, "(published)") || !strings.Contains(r.stdout, "200 selected") {
		t.Errorf("score printed:\n%s", r.stdout)
	}
	read := func(path string) [][]string {
		t.Helper()
		f, err := os.Open(path)
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		recs, err := csv.NewReader(f).ReadAll()
		if err != nil {
			t.Fatalf("%s: %v", path, err)
		}
		return recs
	}
	contact, held := read(out), read(hold)
	if got := strings.Join(contact[0], ","); got != "customer_id,email,probability,band,reasons,list_date" {
		t.Errorf("header %q", got)
	}
	if got := strings.Join(held[0], ","); got != "customer_id,email,list_date" {
		t.Errorf("holdout header %q", got)
	}
	if n := len(contact) - 1 + len(held) - 1; n != 200 || len(held)-1 < 20 || len(held)-1 > 60 {
		t.Errorf("%d contacted and %d held out, want 200 in all, about 40 held out", len(contact)-1, len(held)-1)
	}
	seen := map[string]bool{}
	for _, rec := range contact[1:] {
		seen[rec[0]] = true
		if rec[4] == "" || rec[5] == "" {
			t.Fatalf("row %v lacks reasons or date", rec)
		}
	}
	for _, rec := range held[1:] {
		if seen[rec[0]] {
			t.Fatalf("customer %s is both contacted and held out", rec[0])
		}
	}
	// The demo's customers file marks some customers not contactable; none
	// may appear in either file.
	notContactable := map[string]bool{}
	for _, rec := range read(filepath.Join(dir, "customers.csv"))[1:] {
		if rec[3] == "false" {
			notContactable[rec[0]] = true
		}
	}
	for _, rec := range append(contact[1:], held[1:]...) {
		if notContactable[rec[0]] {
			t.Fatalf("customer %s may not be contacted but is in an export", rec[0])
		}
	}
	for _, tt := range []struct {
		args []string
		want string
	}{
		{[]string{"--size", "10", "--threshold", "0.5"}, "choose one way"},
		{[]string{"--threshold", "1.5"}, "not a probability"},
		{[]string{"--size", "10", "--as-of", "2031-01-01"}, "after the data runs through"},
		{[]string{"--size", "10", "--holdout", "0.9"}, "holdout share"},
		{[]string{}, "give --size K or --threshold P"},
	} {
		args := append([]string{"score", "--db", db, "--dataset", "demo", "--out", filepath.Join(dir, "x.csv")}, tt.args...)
		if r := runCLI(t, nil, args...); r.err == nil || !strings.Contains(r.err.Error(), tt.want) {
			t.Errorf("score %v: %v, want %q", tt.args, r.err, tt.want)
		}
		if _, err := os.Stat(filepath.Join(dir, "x.csv")); err == nil {
			t.Errorf("score %v left a file behind", tt.args)
		}
	}
}
