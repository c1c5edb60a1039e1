package analysis

import (
	"ebb/internal/frame"
	"ebb/internal/outcomes"
)

// Reference is a distribution fixed at training for drift: the inner edges
// of its deciles (Hyndman & Fan definition 7, right-closed bins) and the
// counts of the reference values in those bins (the last count is the
// missing values).
type Reference struct {
	Edges  []float64 `json:"edges"`
	Counts []int     `json:"counts"`
}

// NewReference bins values by their own deciles.
func NewReference(values []float64) Reference {
	e := outcomes.Edges(values)
	return Reference{Edges: e, Counts: outcomes.Counts(values, e)}
}

// PSI is the population stability index of values against the reference
// bins, with empty bins smoothed (outcomes.Epsilon); it returns the values'
// counts too, so a later comparison can use them.
func (r Reference) PSI(values []float64) (float64, []int, error) {
	c := outcomes.Counts(values, r.Edges)
	psi, err := outcomes.PSI(r.Counts, c, outcomes.Epsilon)
	return psi, c, err
}

// FeatureReference is one feature's reference distribution.
type FeatureReference struct {
	Name string `json:"name"`
	Reference
}

// featureReferences are the reference distributions of every column of f.
func featureReferences(f *frame.Frame) []FeatureReference {
	out := make([]FeatureReference, 0, len(f.Names()))
	for j, name := range f.Names() {
		out = append(out, FeatureReference{Name: name, Reference: NewReference(f.ColAt(j))})
	}
	return out
}

// Drift is a list's drift against the training references: the PSI of the
// calibrated scores of every scored customer and of each feature, with the
// score counts kept for comparing consecutive lists.
type Drift struct {
	ScorePSI    float64      `json:"score_psi"`
	ScoreCounts []int        `json:"score_counts"`
	Features    []FeaturePSI `json:"features"`
}

// FeaturePSI is one feature's PSI.
type FeaturePSI struct {
	Name string  `json:"name"`
	PSI  float64 `json:"psi"`
}

// listDrift measures a list's drift; nil when the model carries no
// reference (trained before references were kept).
func listDrift(scoreRef *Reference, feats []FeatureReference, scores []float64, f *frame.Frame) (*Drift, error) {
	if scoreRef == nil {
		return nil, nil
	}
	psi, counts, err := scoreRef.PSI(scores)
	if err != nil {
		return nil, err
	}
	d := &Drift{ScorePSI: psi, ScoreCounts: counts}
	for _, fr := range feats {
		col, ok := f.Col(fr.Name)
		if !ok {
			continue
		}
		p, _, err := fr.PSI(col)
		if err != nil {
			return nil, err
		}
		d.Features = append(d.Features, FeaturePSI{Name: fr.Name, PSI: p})
	}
	return d, nil
}
