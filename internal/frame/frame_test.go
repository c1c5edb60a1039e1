package frame

import (
	"math"
	"slices"
	"testing"
)

func TestFromColumnsValidates(t *testing.T) {
	tests := []struct {
		name      string
		names     []string
		cols      [][]float64
		labels    []uint8
		customers []int32
		days      []int32
		rows      int // when valid
		bad       bool
	}{
		{name: "ok", names: []string{"a", "b"}, cols: [][]float64{{1, 2}, {3, 4}}, labels: []uint8{0, 1}, customers: []int32{7, 8}, days: []int32{1, 1}, rows: 2},
		{name: "ok without labels or keys", names: []string{"a"}, cols: [][]float64{{1, 2, 3}}, rows: 3},
		{name: "no columns, rows from labels", labels: []uint8{0, 1, 1}, rows: 3},
		{name: "names and columns differ", names: []string{"a"}, cols: [][]float64{{1}, {2}}, bad: true},
		{name: "ragged columns", names: []string{"a", "b"}, cols: [][]float64{{1, 2}, {3}}, bad: true},
		{name: "duplicate name", names: []string{"a", "a"}, cols: [][]float64{{1}, {2}}, bad: true},
		{name: "empty name", names: []string{""}, cols: [][]float64{{1}}, bad: true},
		{name: "label 2", names: []string{"a"}, cols: [][]float64{{1, 2}}, labels: []uint8{0, 2}, bad: true},
		{name: "short labels", names: []string{"a"}, cols: [][]float64{{1, 2}}, labels: []uint8{0}, bad: true},
		{name: "short customers", names: []string{"a"}, cols: [][]float64{{1, 2}}, customers: []int32{1}, bad: true},
		{name: "short days", names: []string{"a"}, cols: [][]float64{{1, 2}}, days: []int32{1, 2, 3}, bad: true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			f, err := FromColumns(tc.names, tc.cols, tc.labels, tc.customers, tc.days)
			if tc.bad {
				if err == nil {
					t.Fatal("no error")
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if f.Rows() != tc.rows || f.Cols() != len(tc.names) {
				t.Errorf("shape %d×%d, want %d×%d", f.Rows(), f.Cols(), tc.rows, len(tc.names))
			}
		})
	}
}

func sample(t *testing.T) *Frame {
	t.Helper()
	f, err := FromColumns(
		[]string{"recency_days", "mean_gap_days"},
		[][]float64{{5, 40, 12, 90}, {10, Missing, 20, Missing}},
		[]uint8{0, 1, 0, 1}, []int32{100, 101, 102, 100}, []int32{19000, 19000, 19000, 19030})
	if err != nil {
		t.Fatal(err)
	}
	return f
}

func TestColumnAccess(t *testing.T) {
	f := sample(t)
	tests := []struct {
		name string
		col  string
		want []float64
		ok   bool
	}{
		{"first", "recency_days", []float64{5, 40, 12, 90}, true},
		{"second", "mean_gap_days", []float64{10, math.NaN(), 20, math.NaN()}, true},
		{"absent", "tenure_days", nil, false},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, ok := f.Col(tc.col)
			if ok != tc.ok {
				t.Fatalf("found %v, want %v", ok, tc.ok)
			}
			if !equalNaN(got, tc.want) {
				t.Errorf("got %v, want %v", got, tc.want)
			}
			if want := slices.Index(f.Names(), tc.col); f.Index(tc.col) != want {
				t.Errorf("Index = %d, want %d", f.Index(tc.col), want)
			}
		})
	}
	if f.HasMissing(0) || !f.HasMissing(1) {
		t.Errorf("HasMissing = %v, %v, want false, true", f.HasMissing(0), f.HasMissing(1))
	}
}

func TestSubset(t *testing.T) {
	f := sample(t)
	tests := []struct {
		name      string
		rows      []int
		recency   []float64
		labels    []uint8
		customers []int32
		days      []int32
		bad       bool
	}{
		{name: "reorder", rows: []int{3, 0}, recency: []float64{90, 5}, labels: []uint8{1, 0}, customers: []int32{100, 100}, days: []int32{19030, 19000}},
		{name: "repeat (bootstrap)", rows: []int{1, 1, 2}, recency: []float64{40, 40, 12}, labels: []uint8{1, 1, 0}, customers: []int32{101, 101, 102}, days: []int32{19000, 19000, 19000}},
		{name: "empty", rows: []int{}, recency: []float64{}, labels: []uint8{}, customers: []int32{}, days: []int32{}},
		{name: "out of range", rows: []int{4}, bad: true},
		{name: "negative", rows: []int{-1}, bad: true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			s, err := f.Subset(tc.rows)
			if tc.bad {
				if err == nil {
					t.Fatal("no error")
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			got, _ := s.Col("recency_days")
			if s.Rows() != len(tc.rows) || !slices.Equal(got, tc.recency) || !slices.Equal(s.Labels(), tc.labels) ||
				!slices.Equal(s.Customers(), tc.customers) || !slices.Equal(s.Days(), tc.days) {
				t.Errorf("subset = %v %v %v %v", got, s.Labels(), s.Customers(), s.Days())
			}
			if len(tc.rows) > 0 {
				got[0] = -1 // a copy: the original is untouched
				if orig, _ := f.Col("recency_days"); orig[tc.rows[0]] == -1 {
					t.Error("subset shares values with its source")
				}
			}
		})
	}
}

func TestSelect(t *testing.T) {
	f := sample(t)
	s, err := f.Select([]string{"mean_gap_days", "recency_days"})
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(s.Names(), []string{"mean_gap_days", "recency_days"}) || s.Rows() != 4 {
		t.Errorf("names %v rows %d", s.Names(), s.Rows())
	}
	if _, err := f.Select([]string{"nope"}); err == nil {
		t.Error("unknown column: no error")
	}
	e, err := f.Select(nil)
	if err != nil || e.Rows() != 4 || e.Cols() != 0 {
		t.Errorf("empty select: %v rows %d cols %d", err, e.Rows(), e.Cols())
	}
}

func TestStandardizer(t *testing.T) {
	train := sample(t)
	st, err := FitStandardizer(train)
	if err != nil {
		t.Fatal(err)
	}
	// recency 5, 40, 12, 90: mean 36.75; population variance
	// (31.75² + 3.25² + 24.75² + 53.25²)/4 = 4466.75/4 = 1116.6875.
	// mean_gap 10, 20 (two missing): mean 15, population SD 5.
	sd0 := math.Sqrt(1116.6875)
	if !near(st.Mean[0], 36.75, 1e-12) || !near(st.SD[0], sd0, 1e-12) || st.Indicator[0] {
		t.Errorf("recency: mean %v sd %v indicator %v", st.Mean[0], st.SD[0], st.Indicator[0])
	}
	if !near(st.Mean[1], 15, 1e-12) || !near(st.SD[1], 5, 1e-12) || !st.Indicator[1] {
		t.Errorf("mean gap: mean %v sd %v indicator %v", st.Mean[1], st.SD[1], st.Indicator[1])
	}
	// Applied to another frame with the columns in a different order,
	// an extra column and a missing value in a column that had none.
	other, err := FromColumns(
		[]string{"mean_gap_days", "spend_180", "recency_days"},
		[][]float64{{Missing, 25, 15}, {1, 2, 3}, {36.75, Missing, 36.75 + sd0}},
		nil, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	z, err := st.Apply(other)
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		col  string
		want []float64
	}{
		{"recency_days", []float64{0, 0, 1}},
		{"mean_gap_days", []float64{0, 2, 0}},
		{"mean_gap_days_missing", []float64{1, 0, 0}},
	}
	if !slices.Equal(z.Names(), []string{"recency_days", "mean_gap_days", "mean_gap_days_missing"}) {
		t.Fatalf("output names %v", z.Names())
	}
	for _, tc := range tests {
		t.Run(tc.col, func(t *testing.T) {
			got, _ := z.Col(tc.col)
			for i := range tc.want {
				if !near(got[i], tc.want[i], 1e-12) {
					t.Errorf("row %d = %v, want %v", i, got[i], tc.want[i])
				}
			}
		})
	}
	if _, err := st.Apply(sample(t).mustSelect(t, "recency_days")); err == nil {
		t.Error("apply to a frame lacking a column: no error")
	}
}

func TestStandardizerEdgeCases(t *testing.T) {
	tests := []struct {
		name      string
		col       []float64
		mean, sd  float64
		indicator bool
		bad       bool
	}{
		{name: "constant keeps SD 1", col: []float64{4, 4, 4}, mean: 4, sd: 1},
		{name: "all missing", col: []float64{Missing, Missing}, mean: 0, sd: 1, indicator: true},
		{name: "large offset (day numbers)", col: []float64{1e9 + 1, 1e9 + 2, 1e9 + 3}, mean: 1e9 + 2, sd: math.Sqrt(2.0 / 3)},
		{name: "infinite value", col: []float64{1, math.Inf(1)}, bad: true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			f, err := FromColumns([]string{"x"}, [][]float64{tc.col}, nil, nil, nil)
			if err != nil {
				t.Fatal(err)
			}
			st, err := FitStandardizer(f)
			if tc.bad {
				if err == nil {
					t.Fatal("no error")
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if !near(st.Mean[0], tc.mean, 1e-12*math.Max(1, math.Abs(tc.mean))) || !near(st.SD[0], tc.sd, 1e-9) || st.Indicator[0] != tc.indicator {
				t.Errorf("mean %v sd %v indicator %v, want %v %v %v", st.Mean[0], st.SD[0], st.Indicator[0], tc.mean, tc.sd, tc.indicator)
			}
		})
	}
	bad := &Standardizer{Names: []string{"a"}, Mean: []float64{0}, SD: []float64{0}, Indicator: []bool{false}}
	if err := bad.Validate(); err == nil {
		t.Error("SD 0 validated")
	}
}

func (f *Frame) mustSelect(t *testing.T, names ...string) *Frame {
	t.Helper()
	s, err := f.Select(names)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

func near(a, b, tol float64) bool { return math.Abs(a-b) <= tol }

func equalNaN(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] && !(math.IsNaN(a[i]) && math.IsNaN(b[i])) {
			return false
		}
	}
	return true
}
