package model

import (
	"math"
	"testing"

	"ebb/internal/frame"
)

// Unpenalised fits against statsmodels and R (shared reference §5a, §5b).
func TestLogisticUnpenalisedReference(t *testing.T) {
	tests := []struct {
		name     string
		file     string
		features []string
		label    string
		// intercept first
		coef, se       []float64
		coefTol, seRel float64
		loglik, llTol  float64
		fittedFirst    []float64 // fitted P(y=1) of the first rows
		fittedTol      float64
		source         string
	}{
		{
			name: "spector", file: "spector.csv", features: []string{"GPA", "TUCE", "PSI"}, label: "GRADE",
			coef:    []float64{-13.0213468581, 2.8261125949, 0.0951576613, 2.3786876551},
			se:      []float64{4.9313242136, 1.2629410756, 0.1415542057, 1.0645642545},
			coefTol: 1e-7, seRel: 1e-7, loglik: -12.8896342221, llTol: 1e-8,
			// scripts/output.txt "first fitted probs" (statsmodels res.predict)
			fittedFirst: []float64{0.026577993870354626, 0.05950125498242465, 0.18725993218892192, 0.025901636260349567, 0.5698929510139885},
			fittedTol:   1e-9,
			source:      `statsmodels 0.13.5 Logit(...).fit(method="newton", tol=1e-12); confirmed by R glm (reference §5a)`,
		},
		{
			name: "mtcars", file: "mtcars_am.csv", features: []string{"hp", "wt"}, label: "am",
			coef: []float64{18.8662987172, 0.0362555961, -8.0834751824},
			// R's SEs (IRLS weights of its last iteration); 1e-6 relative
			// covers their 5e-8 difference from the exact Hessian.
			se:      []float64{7.4435580602, 0.0177341537, 3.0686751131},
			coefTol: 1e-7, seRel: 1e-6, loglik: -5.0295552361, llTol: 1e-8,
			fittedFirst: []float64{0.842335536517, 0.404782532737, 0.970240822214},
			fittedTol:   1e-10,
			source:      `R 4.2.2 glm(am ~ hp + wt, binomial, mtcars, epsilon = 1e-14) (reference §5b)`,
		},
		{
			name: "mtcars exact Hessian", file: "mtcars_am.csv", features: []string{"hp", "wt"}, label: "am",
			coef:    []float64{18.8662987172, 0.0362555961, -8.0834751824},
			se:      []float64{7.4435584280, 0.0177341543, 3.0686752754},
			coefTol: 1e-7, seRel: 1e-8, loglik: -5.029555236133, llTol: 1e-10,
			source: `statsmodels 0.13.5 Logit on mtcars_am.csv, exact-Hessian SE (reference §5b, logit_cross.py)`,
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			f := loadFrame(t, tc.file, tc.features, tc.label)
			fit, err := FitLogistic(f, LogisticOptions{C: math.Inf(1)})
			if err != nil {
				t.Fatal(err)
			}
			got := append([]float64{fit.Intercept}, fit.Coef...)
			for j := range tc.coef {
				if !near(got[j], tc.coef[j], tc.coefTol) {
					t.Errorf("coef %d = %.12f, want %.10f ± %g (%s)", j, got[j], tc.coef[j], tc.coefTol, tc.source)
				}
				if !nearRel(fit.SE[j], tc.se[j], tc.seRel) {
					t.Errorf("SE %d = %.12f, want %.10f ± %g relative (%s)", j, fit.SE[j], tc.se[j], tc.seRel, tc.source)
				}
			}
			if !near(fit.LogLik, tc.loglik, tc.llTol) {
				t.Errorf("log-likelihood = %.12f, want %.10f ± %g (%s)", fit.LogLik, tc.loglik, tc.llTol, tc.source)
			}
			p, err := fit.Predict(f, nil)
			if err != nil {
				t.Fatal(err)
			}
			for i, want := range tc.fittedFirst {
				if !near(p[i], want, tc.fittedTol) {
					t.Errorf("fitted[%d] = %.12f, want %.12f ± %g (%s)", i, p[i], want, tc.fittedTol, tc.source)
				}
			}
		})
	}
}

// Spector null model: an intercept-only frame gives statsmodels' llnull.
func TestLogisticInterceptOnlySpector(t *testing.T) {
	full := loadFrame(t, "spector.csv", nil, "GRADE")
	fit, err := FitLogistic(full, LogisticOptions{C: math.Inf(1)})
	if err != nil {
		t.Fatal(err)
	}
	// statsmodels 0.13.5 llnull −20.5917296966 (reference §5a), 1e-8.
	if !near(fit.LogLik, -20.5917296966, 1e-8) {
		t.Errorf("null log-likelihood = %.12f, want -20.5917296966 ± 1e-8", fit.LogLik)
	}
	// 11 of 32 got GRADE = 1: intercept log(11/21) exactly.
	if !near(fit.Intercept, math.Log(11.0/21.0), 1e-12) {
		t.Errorf("intercept = %.15f, want log(11/21)", fit.Intercept)
	}
}

var breastCancerFeatures = []string{
	"mean_radius", "mean_texture", "mean_perimeter", "mean_area", "mean_smoothness", "mean_compactness",
	"mean_concavity", "mean_concave_points", "mean_symmetry", "mean_fractal_dimension",
	"radius_error", "texture_error", "perimeter_error", "area_error", "smoothness_error",
	"compactness_error", "concavity_error", "concave_points_error", "symmetry_error",
	"fractal_dimension_error", "worst_radius", "worst_texture", "worst_perimeter", "worst_area",
	"worst_smoothness", "worst_compactness", "worst_concavity", "worst_concave_points",
	"worst_symmetry", "worst_fractal_dimension",
}

// L2 fit on standardized breast-cancer data against the exact optimum of
// scikit-learn's objective (reference §5c, logit_l2_breast_cancer_coef.csv:
// numpy Newton to gradient < 1.1e-14, confirmed by sklearn 1.2.1
// LogisticRegression(solver="newton-cg", tol=1e-10) to 1.1e-9).
func TestLogisticL2BreastCancerReference(t *testing.T) {
	head, rows := readCSV(t, "logit_l2_breast_cancer_coef.csv")
	tests := []struct {
		column                string // in the coefficient CSV
		C                     float64
		sumLogLoss, objective float64
	}{
		{"C=1", 1, 30.3799669186, 37.7589459619},
		{"C=0.1", 0.1, 47.3249494678, 66.2716127081},
	}
	raw := loadFrame(t, "breast_cancer.csv", breastCancerFeatures, "malignant")
	for _, tc := range tests {
		t.Run(tc.column, func(t *testing.T) {
			col := -1
			for j, h := range head {
				if h == tc.column {
					col = j
				}
			}
			if col < 0 {
				t.Fatalf("no column %q", tc.column)
			}
			m, err := TrainLogistic(raw, breastCancerFeatures, LogisticOptions{C: tc.C})
			if err != nil {
				t.Fatal(err)
			}
			fit := m.Logistic
			// Tolerance 1e-6 absolute: the reference allows it when the
			// solver's gradient norm is below ~1e-8.
			if fit.GradNorm > 1e-8 {
				t.Fatalf("gradient %.3g not below 1e-8", fit.GradNorm)
			}
			if len(fit.Coef) != len(rows)-1 {
				t.Fatalf("%d coefficients, reference has %d", len(fit.Coef), len(rows)-1)
			}
			for k, r := range rows {
				want := parse(t, r[col])
				var got float64
				if k == 0 {
					got = fit.Intercept
				} else {
					if fit.Terms[k-1] != r[0] {
						t.Fatalf("term %d is %q, reference row %q", k-1, fit.Terms[k-1], r[0])
					}
					got = fit.Coef[k-1]
				}
				if !near(got, want, 1e-6) {
					t.Errorf("%s = %.10f, want %.10f ± 1e-6", r[0], got, want)
				}
			}
			var pen float64
			for _, w := range fit.Coef {
				pen += w * w
			}
			if !near(-fit.LogLik, tc.sumLogLoss, 1e-7) {
				t.Errorf("summed log loss = %.10f, want %.10f ± 1e-7", -fit.LogLik, tc.sumLogLoss)
			}
			if obj := -fit.LogLik + pen/(2*tc.C); !nearRel(obj, tc.objective, 1e-7) {
				t.Errorf("objective = %.10f, want %.10f ± 1e-7 relative", obj, tc.objective)
			}
			if fit.SE != nil {
				t.Errorf("penalised fit reports standard errors")
			}
		})
	}
}

// Isotonic regression against scikit-learn 1.2.1 IsotonicRegression
// (out_of_bounds="clip"), reference §11 (isotonic.py); tolerance 1e-12.
func TestIsotonicReference(t *testing.T) {
	third, twoThirds := 1.0/3, 2.0/3
	calX := []float64{0.05, 0.15, 0.25, 0.35, 0.45, 0.55, 0.62, 0.66, 0.71, 0.85, 0.93, 0.97}
	calY := []float64{0, 0, 0, 1, 0, 1, 1, 0, 1, 1, 1, 1}
	tests := []struct {
		name   string
		x, y   []float64
		fitted []float64
		at     []float64
		atWant []float64
	}{
		{
			name: "PAV of 1,3,2,4,3,5 (confirmed by R isoreg)",
			x:    []float64{0, 1, 2, 3, 4, 5}, y: []float64{1, 3, 2, 4, 3, 5},
			fitted: []float64{1, 2.5, 2.5, 3.5, 3.5, 5},
		},
		{
			name: "calibration example of §6 (confirmed by R isoreg)",
			x:    calX, y: calY,
			fitted: []float64{0, 0, 0, 0.5, 0.5, twoThirds, twoThirds, twoThirds, 1, 1, 1, 1},
			at:     []float64{0.0, 0.40, 0.50, 0.64, 1.0},
			atWant: []float64{0, 0.5, 0.5833333333333333, 0.6666666666666666, 1},
		},
		{
			name: "tied x pooled first (sklearn only)",
			x:    []float64{0.1, 0.2, 0.2, 0.3, 0.4, 0.4, 0.4, 0.5}, y: []float64{0, 1, 0, 0, 1, 0, 0, 1},
			fitted: []float64{0, third, third, third, third, third, third, 1},
		},
		{
			// Same points, tied rows in the other order: pooling tied x
			// first makes the fit independent of row order.
			name: "tied x pooled first, tied rows reordered",
			x:    []float64{0.5, 0.4, 0.4, 0.4, 0.3, 0.2, 0.2, 0.1}, y: []float64{1, 0, 0, 1, 0, 0, 1, 0},
			fitted: []float64{1, third, third, third, third, third, third, 0},
		},
		{
			name:   "calibration example, rows shuffled",
			x:      []float64{0.97, 0.05, 0.66, 0.35, 0.85, 0.15, 0.55, 0.45, 0.25, 0.71, 0.93, 0.62},
			y:      []float64{1, 0, 0, 1, 1, 0, 1, 0, 0, 1, 1, 1},
			fitted: []float64{1, 0, twoThirds, 0.5, 1, 0, twoThirds, 0.5, 0, 1, 1, twoThirds},
			at:     []float64{0.0, 0.40, 0.50, 0.64, 1.0},
			atWant: []float64{0, 0.5, 0.5833333333333333, 0.6666666666666666, 1},
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			iso, err := FitIsotonicValues(tc.x, tc.y)
			if err != nil {
				t.Fatal(err)
			}
			for i, x := range tc.x {
				if got := iso.Calibrate(x); !near(got, tc.fitted[i], 1e-12) {
					t.Errorf("fitted at %v = %.15f, want %.15f", x, got, tc.fitted[i])
				}
			}
			for i, x := range tc.at {
				if got := iso.Calibrate(x); !near(got, tc.atWant[i], 1e-12) {
					t.Errorf("predict at %v = %.15f, want %.15f", x, got, tc.atWant[i])
				}
			}
		})
	}
}

// The reference frames use the frame package's standardizer with
// scikit-learn's convention (population SD); check one column's mean/SD
// by the textbook formula so a change of divisor is caught here too.
func TestBreastCancerStandardizerIsPopulationSD(t *testing.T) {
	raw := loadFrame(t, "breast_cancer.csv", []string{"mean_radius"}, "malignant")
	st, err := frame.FitStandardizer(raw)
	if err != nil {
		t.Fatal(err)
	}
	col := raw.ColAt(0)
	var s float64
	for _, v := range col {
		s += v
	}
	mean := s / float64(len(col))
	var ss float64
	for _, v := range col {
		ss += (v - mean) * (v - mean)
	}
	if !nearRel(st.SD[0], math.Sqrt(ss/float64(len(col))), 1e-14) {
		t.Errorf("SD = %v, want population SD %v", st.SD[0], math.Sqrt(ss/float64(len(col))))
	}
}
