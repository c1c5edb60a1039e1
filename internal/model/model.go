// Package model fits, calibrates, applies and serialises ebb's churn models:
// the recency baseline, L2-penalised logistic regression, gradient-boosted
// trees and BG/NBD, each with an optional Platt or isotonic calibration
// fitted on the validation slice.
//
// Scores are P(label = 1), i.e. P(no order day within the horizon H).
package model

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"strconv"

	"ebb/internal/frame"
)

// Kind names a model family.
type Kind string

const (
	KindBaseline Kind = "recency_baseline"
	KindLogistic Kind = "logistic"
	KindTrees    Kind = "gradient_boosted_trees"
	KindBGNBD    Kind = "bgnbd"
)

// Baseline is the recency rule: score = recency / X ("quiet longest
// first"), read from the column named Column.
type Baseline struct {
	Column string  `json:"column"`
	X      float64 `json:"x"`
}

// NewBaseline returns the baseline on the given recency column and churn
// window X (whole days, > 0).
func NewBaseline(column string, x float64) (*Baseline, error) {
	b := &Baseline{Column: column, X: x}
	if err := b.validate(); err != nil {
		return nil, err
	}
	return b, nil
}

func (b *Baseline) validate() error {
	if b.Column == "" {
		return fmt.Errorf("recency baseline: no column")
	}
	if !(b.X > 0) || math.IsInf(b.X, 0) {
		return fmt.Errorf("recency baseline: churn window %v, want > 0", b.X)
	}
	return nil
}

// Score returns recency/X for every row into dst (reused when it has room);
// a missing recency scores NaN.
func (b *Baseline) Score(f *frame.Frame, dst []float64) ([]float64, error) {
	col, ok := f.Col(b.Column)
	if !ok {
		return nil, fmt.Errorf("recency baseline: frame has no column %q", b.Column)
	}
	dst = grow(dst, len(col))
	for i, v := range col {
		dst[i] = v / b.X
	}
	return dst, nil
}

// CalibrationKind names a calibration method.
type CalibrationKind string

const (
	CalibrationPlatt    CalibrationKind = "platt"
	CalibrationIsotonic CalibrationKind = "isotonic"
)

// Calibration maps a model's raw score to a probability. Exactly one of
// Platt and Isotonic is set, matching Kind.
type Calibration struct {
	Kind     CalibrationKind `json:"kind"`
	Platt    *Platt          `json:"platt,omitempty"`
	Isotonic *Isotonic       `json:"isotonic,omitempty"`
}

// FitCalibration fits the given method on raw scores and labels (the
// validation slice).
func FitCalibration(kind CalibrationKind, scores []float64, labels []uint8) (*Calibration, error) {
	switch kind {
	case CalibrationPlatt:
		p, err := FitPlatt(scores, labels)
		if err != nil {
			return nil, err
		}
		return &Calibration{Kind: kind, Platt: p}, nil
	case CalibrationIsotonic:
		c, err := FitIsotonic(scores, labels)
		if err != nil {
			return nil, err
		}
		return &Calibration{Kind: kind, Isotonic: c}, nil
	}
	return nil, fmt.Errorf("fit calibration: unknown method %q", kind)
}

// Apply calibrates scores in place.
func (c *Calibration) Apply(scores []float64) {
	switch c.Kind {
	case CalibrationPlatt:
		for i, s := range scores {
			scores[i] = c.Platt.Calibrate(s)
		}
	case CalibrationIsotonic:
		for i, s := range scores {
			scores[i] = c.Isotonic.Calibrate(s)
		}
	}
}

func (c *Calibration) validate() error {
	switch c.Kind {
	case CalibrationPlatt:
		if c.Platt == nil || c.Isotonic != nil {
			return fmt.Errorf("calibration %q: parameters missing or mixed", c.Kind)
		}
		if !finite(c.Platt.Slope) || !finite(c.Platt.Intercept) {
			return fmt.Errorf("calibration %q: parameters not finite", c.Kind)
		}
		return nil
	case CalibrationIsotonic:
		if c.Isotonic == nil || c.Platt != nil {
			return fmt.Errorf("calibration %q: parameters missing or mixed", c.Kind)
		}
		return c.Isotonic.validate()
	}
	return fmt.Errorf("calibration: unknown method %q", c.Kind)
}

// Meta is carried with a model and never interpreted by this package.
type Meta struct {
	ChurnDefinitionVersion string `json:"churn_definition_version"`
	DatasetVersion         string `json:"dataset_version"`
	Seed                   uint64 `json:"seed"`
}

// Model is a complete scoring recipe: which input columns it reads, how they
// are standardized, the fitted parameters and the calibration.
type Model struct {
	Kind Kind
	// Features are the raw input columns the model reads, in order.
	Features []string
	// Standardizer (logistic only) maps Features to the columns named in
	// Logistic.Terms.
	Standardizer *frame.Standardizer
	Baseline     *Baseline
	Logistic     *Logistic
	// Trees (gradient-boosted trees only) reads Features unstandardized.
	Trees *Trees
	// BGNBD (BG/NBD only) reads order_days_total, tenure_days and
	// recency_days.
	BGNBD *BGNBD
	// Calibration is nil for an uncalibrated model.
	Calibration *Calibration
	Meta        Meta
}

// Score returns the uncalibrated score of every row of the raw frame f: for
// the baseline recency/X, for logistic regression P(y = 1) from the
// standardized features.
func (m *Model) Score(f *frame.Frame) ([]float64, error) {
	switch m.Kind {
	case KindBaseline:
		return m.Baseline.Score(f, nil)
	case KindLogistic:
		z, err := m.Standardizer.Apply(f)
		if err != nil {
			return nil, fmt.Errorf("score %s model: %w", m.Kind, err)
		}
		return m.Logistic.Predict(z, nil)
	case KindTrees:
		return m.Trees.Predict(f, nil)
	case KindBGNBD:
		return m.BGNBD.Score(f, nil)
	}
	return nil, fmt.Errorf("score: unknown model kind %q", m.Kind)
}

// Predict returns the calibrated score (the raw score when the model has no
// calibration) of every row of the raw frame f.
func (m *Model) Predict(f *frame.Frame) ([]float64, error) {
	s, err := m.Score(f)
	if err != nil {
		return nil, err
	}
	if m.Calibration != nil {
		m.Calibration.Apply(s)
	}
	return s, nil
}

// Validate checks that the model is complete and consistent.
func (m *Model) Validate() error {
	switch m.Kind {
	case KindBaseline:
		if m.Baseline == nil || m.Logistic != nil || m.Standardizer != nil || m.Trees != nil || m.BGNBD != nil {
			return fmt.Errorf("model %q: parameters missing or mixed", m.Kind)
		}
		if err := m.Baseline.validate(); err != nil {
			return err
		}
		if len(m.Features) != 1 || m.Features[0] != m.Baseline.Column {
			return fmt.Errorf("model %q: features %q, want [%q]", m.Kind, m.Features, m.Baseline.Column)
		}
	case KindLogistic:
		if m.Logistic == nil || m.Standardizer == nil || m.Baseline != nil || m.Trees != nil || m.BGNBD != nil {
			return fmt.Errorf("model %q: parameters missing or mixed", m.Kind)
		}
		if err := m.Standardizer.Validate(); err != nil {
			return err
		}
		if err := m.Logistic.validate(); err != nil {
			return err
		}
		if !equalStrings(m.Features, m.Standardizer.Names) {
			return fmt.Errorf("model %q: features %q differ from the standardizer's %q", m.Kind, m.Features, m.Standardizer.Names)
		}
		out := make(map[string]bool)
		for _, n := range m.Standardizer.OutputNames() {
			out[n] = true
		}
		for _, t := range m.Logistic.Terms {
			if !out[t] {
				return fmt.Errorf("model %q: term %q is not a standardized feature", m.Kind, t)
			}
		}
	case KindTrees:
		if m.Trees == nil || m.Logistic != nil || m.Standardizer != nil || m.Baseline != nil || m.BGNBD != nil {
			return fmt.Errorf("model %q: parameters missing or mixed", m.Kind)
		}
		if err := m.Trees.validate(); err != nil {
			return err
		}
		if !equalStrings(m.Features, m.Trees.Features) {
			return fmt.Errorf("model %q: features %q differ from the trees' %q", m.Kind, m.Features, m.Trees.Features)
		}
	case KindBGNBD:
		if m.BGNBD == nil || m.Logistic != nil || m.Standardizer != nil || m.Baseline != nil || m.Trees != nil {
			return fmt.Errorf("model %q: parameters missing or mixed", m.Kind)
		}
		if err := m.BGNBD.validate(); err != nil {
			return err
		}
		if !equalStrings(m.Features, BGNBDFeatures) {
			return fmt.Errorf("model %q: features %q, want %q", m.Kind, m.Features, BGNBDFeatures)
		}
	default:
		return fmt.Errorf("model: unknown kind %q", m.Kind)
	}
	if m.Calibration != nil {
		return m.Calibration.validate()
	}
	return nil
}

func equalStrings(a, b []string) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// formatVersion is written into every saved model; Load refuses others.
const formatVersion = 1

type savedLogistic struct {
	*Logistic
	C string `json:"c"` // strconv 'g' text, "+Inf" when unpenalised
}

type savedModel struct {
	Format       int                 `json:"format"`
	Kind         Kind                `json:"kind"`
	Features     []string            `json:"features"`
	Standardizer *frame.Standardizer `json:"standardizer,omitempty"`
	Baseline     *Baseline           `json:"baseline,omitempty"`
	Logistic     *savedLogistic      `json:"logistic,omitempty"`
	Trees        *Trees              `json:"trees,omitempty"`
	BGNBD        *BGNBD              `json:"bgnbd,omitempty"`
	Calibration  *Calibration        `json:"calibration,omitempty"`
	Meta         Meta                `json:"meta"`
}

// Save encodes the model as JSON. Floats are written in Go's shortest
// round-trip form, so Load gives back the same bits and the reloaded model
// predicts identically.
func (m *Model) Save() ([]byte, error) {
	if err := m.Validate(); err != nil {
		return nil, fmt.Errorf("save model: %w", err)
	}
	s := savedModel{
		Format:       formatVersion,
		Kind:         m.Kind,
		Features:     m.Features,
		Standardizer: m.Standardizer,
		Baseline:     m.Baseline,
		Trees:        m.Trees,
		BGNBD:        m.BGNBD,
		Calibration:  m.Calibration,
		Meta:         m.Meta,
	}
	if m.Logistic != nil {
		s.Logistic = &savedLogistic{Logistic: m.Logistic, C: strconv.FormatFloat(m.Logistic.C, 'g', -1, 64)}
	}
	b, err := json.Marshal(s)
	if err != nil {
		return nil, fmt.Errorf("save model: %w", err)
	}
	return b, nil
}

// Load decodes a model written by Save and validates it. Unknown fields are
// refused so a model from a newer format is not half-read.
func Load(data []byte) (*Model, error) {
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	var s savedModel
	if err := dec.Decode(&s); err != nil {
		return nil, fmt.Errorf("load model: %w", err)
	}
	if s.Format != formatVersion {
		return nil, fmt.Errorf("load model: format %d, this build reads %d", s.Format, formatVersion)
	}
	m := &Model{
		Kind:         s.Kind,
		Features:     s.Features,
		Standardizer: s.Standardizer,
		Baseline:     s.Baseline,
		Trees:        s.Trees,
		BGNBD:        s.BGNBD,
		Calibration:  s.Calibration,
		Meta:         s.Meta,
	}
	if s.Logistic != nil {
		if s.Logistic.Logistic == nil {
			s.Logistic.Logistic = &Logistic{}
		}
		c, err := strconv.ParseFloat(s.Logistic.C, 64)
		if err != nil {
			return nil, fmt.Errorf("load model: logistic C %q: %w", s.Logistic.C, err)
		}
		m.Logistic = s.Logistic.Logistic
		m.Logistic.C = c
	}
	if err := m.Validate(); err != nil {
		return nil, fmt.Errorf("load model: %w", err)
	}
	return m, nil
}

// TrainBaseline returns the uncalibrated recency baseline model.
func TrainBaseline(column string, x float64) (*Model, error) {
	b, err := NewBaseline(column, x)
	if err != nil {
		return nil, err
	}
	return &Model{Kind: KindBaseline, Features: []string{column}, Baseline: b}, nil
}

// TrainLogistic standardizes the named features of train (learning the
// standardizer there, adding missing indicators) and fits logistic
// regression on them; the result is uncalibrated.
func TrainLogistic(train *frame.Frame, features []string, opt LogisticOptions) (*Model, error) {
	raw, err := train.Select(features)
	if err != nil {
		return nil, fmt.Errorf("train logistic: %w", err)
	}
	st, err := frame.FitStandardizer(raw)
	if err != nil {
		return nil, fmt.Errorf("train logistic: %w", err)
	}
	z, err := st.Apply(raw)
	if err != nil {
		return nil, fmt.Errorf("train logistic: %w", err)
	}
	lr, err := FitLogistic(z, opt)
	if err != nil {
		return nil, fmt.Errorf("train logistic: %w", err)
	}
	return &Model{Kind: KindLogistic, Features: append([]string(nil), features...), Standardizer: st, Logistic: lr}, nil
}

// Calibrate fits the model's calibration on the raw scores and labels of
// valid (the validation slice), replacing any earlier one.
func (m *Model) Calibrate(kind CalibrationKind, valid *frame.Frame) error {
	if valid.Labels() == nil {
		return fmt.Errorf("calibrate %s model: validation frame has no labels", m.Kind)
	}
	s, err := m.Score(valid)
	if err != nil {
		return fmt.Errorf("calibrate %s model: %w", m.Kind, err)
	}
	c, err := FitCalibration(kind, s, valid.Labels())
	if err != nil {
		return fmt.Errorf("calibrate %s model: %w", m.Kind, err)
	}
	m.Calibration = c
	return nil
}
