package frame

import (
	"fmt"
	"math"
)

// MissingSuffix is appended to a column name to name its missing-value
// indicator column.
const MissingSuffix = "_missing"

// Standardizer maps each column to (value − Mean) / SD, with the mean and the
// population standard deviation (divisor n, as scikit-learn's StandardScaler)
// learned on a training frame over its non-missing values. A column with
// zero spread (or no values) keeps SD = 1, as StandardScaler does.
//
// Missing values become 0 after standardizing (the training mean). For each
// column that had a missing value in training, Apply adds an indicator
// column named Name+MissingSuffix (1 where missing, else 0) right after the
// standardized column. A column with no missing value in training gets no
// indicator; a missing value there at scoring time still becomes 0.
type Standardizer struct {
	Names     []string  `json:"names"`
	Mean      []float64 `json:"mean"`
	SD        []float64 `json:"sd"`
	Indicator []bool    `json:"indicator"`
}

// FitStandardizer learns the mean, SD and missing-indicator flag of every
// column of f.
func FitStandardizer(f *Frame) (*Standardizer, error) {
	s := &Standardizer{
		Names:     f.Names(),
		Mean:      make([]float64, f.Cols()),
		SD:        make([]float64, f.Cols()),
		Indicator: make([]bool, f.Cols()),
	}
	for j := range f.cols {
		col := f.cols[j]
		var n int
		var sum float64
		for _, v := range col {
			if v != v {
				continue
			}
			if math.IsInf(v, 0) {
				return nil, fmt.Errorf("fit standardizer: column %q holds an infinite value", f.names[j])
			}
			n++
			sum += v
		}
		s.Indicator[j] = n < len(col)
		if n == 0 {
			s.SD[j] = 1
			continue
		}
		mean := sum / float64(n)
		// Two-pass variance: the second pass is about the mean, so no
		// cancellation even for columns like day numbers.
		var ss, comp float64
		for _, v := range col {
			if v != v {
				continue
			}
			d := v - mean
			ss += d * d
			comp += d
		}
		variance := (ss - comp*comp/float64(n)) / float64(n)
		sd := math.Sqrt(math.Max(variance, 0))
		if sd == 0 || math.IsNaN(sd) {
			sd = 1
		}
		s.Mean[j] = mean
		s.SD[j] = sd
	}
	return s, nil
}

// OutputNames lists the columns Apply produces, in order.
func (s *Standardizer) OutputNames() []string {
	out := make([]string, 0, len(s.Names))
	for j, name := range s.Names {
		out = append(out, name)
		if s.Indicator[j] {
			out = append(out, name+MissingSuffix)
		}
	}
	return out
}

// Validate checks that the standardizer's slices agree and its numbers are
// usable (finite means, positive finite SDs).
func (s *Standardizer) Validate() error {
	n := len(s.Names)
	if len(s.Mean) != n || len(s.SD) != n || len(s.Indicator) != n {
		return fmt.Errorf("standardizer: %d names, %d means, %d SDs, %d indicator flags", n, len(s.Mean), len(s.SD), len(s.Indicator))
	}
	for j := range n {
		if math.IsNaN(s.Mean[j]) || math.IsInf(s.Mean[j], 0) {
			return fmt.Errorf("standardizer: mean of %q is %v", s.Names[j], s.Mean[j])
		}
		if !(s.SD[j] > 0) || math.IsInf(s.SD[j], 0) {
			return fmt.Errorf("standardizer: SD of %q is %v", s.Names[j], s.SD[j])
		}
	}
	return nil
}

// Apply returns a new frame with the standardized columns (looked up by name
// in f, so f may hold other columns in any order) followed in place by their
// missing indicators; labels and keys are shared with f.
func (s *Standardizer) Apply(f *Frame) (*Frame, error) {
	if err := s.Validate(); err != nil {
		return nil, fmt.Errorf("apply standardizer: %w", err)
	}
	names := s.OutputNames()
	cols := make([][]float64, 0, len(names))
	for j, name := range s.Names {
		src, ok := f.Col(name)
		if !ok {
			return nil, fmt.Errorf("apply standardizer: frame has no column %q", name)
		}
		mean, sd := s.Mean[j], s.SD[j]
		dst := make([]float64, len(src))
		var ind []float64
		if s.Indicator[j] {
			ind = make([]float64, len(src))
		}
		for i, v := range src {
			if v != v {
				if ind != nil {
					ind[i] = 1
				}
				continue // dst[i] stays 0
			}
			dst[i] = (v - mean) / sd
		}
		cols = append(cols, dst)
		if ind != nil {
			cols = append(cols, ind)
		}
	}
	out, err := FromColumns(names, cols, f.labels, f.customers, f.days)
	if err != nil {
		return nil, fmt.Errorf("apply standardizer: %w", err)
	}
	out.rows = f.rows
	return out, nil
}
