package store

import (
	"bytes"
	"context"
	"testing"
	"time"

	"ebb/internal/civil"
	"ebb/internal/problem"
)

// A dataset's salt may change only while it has no list.
func TestSetSalt(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)
	imp := importReady(t, st, "shop", false)
	salt := []byte("sixteen bytes or more of salt")
	if err := st.SetSalt(ctx, imp.DatasetID, salt[:8]); !problem.Is(err, problem.Invalid) {
		t.Errorf("a short salt: %v", err)
	}
	if err := st.SetSalt(ctx, 999, salt); !problem.Is(err, problem.NotFound) {
		t.Errorf("no such dataset: %v", err)
	}
	if err := st.SetSalt(ctx, imp.DatasetID, salt); err != nil {
		t.Fatal(err)
	}
	d, err := st.DatasetByID(ctx, imp.DatasetID)
	if err != nil || !bytes.Equal(d.Salt, salt) {
		t.Fatalf("salt %q, %v", d.Salt, err)
	}
	_, models, err := st.InsertTrainingRun(ctx, TrainingRun{DatasetID: d.ID, VersionID: d.Version, DefinitionID: mustDefinition(t, st, d.ID),
		Options: []byte("{}"), Report: []byte("{}"), CreatedBy: "t", CreatedAt: time.Now()}, []StoredModel{{Name: "m", Kind: "k", Model: []byte("{}"), Summary: []byte("{}")}}, false)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := st.InsertList(ctx, List{DatasetID: d.ID, VersionID: d.Version, ModelID: models[0], AsOf: civil.Date(20000), DataThrough: civil.Date(20000),
		Summary: []byte("{}"), CreatedBy: "t", CreatedAt: time.Now()}, nil); err != nil {
		t.Fatal(err)
	}
	if err := st.SetSalt(ctx, imp.DatasetID, []byte("another salt of sixteen bytes")); !problem.Is(err, problem.Conflict) {
		t.Errorf("with a list: %v, want a conflict", err)
	}
}

func mustDefinition(t *testing.T, st *Store, datasetID int64) int64 {
	t.Helper()
	d, err := st.InsertDefinition(context.Background(), Definition{DatasetID: datasetID, WindowDays: 30, HorizonDays: 30, Method: "manual", Rationale: "test", CreatedBy: "t", CreatedAt: time.Now()})
	if err != nil {
		t.Fatal(err)
	}
	return d.ID
}
