package model

import (
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"sort"
	"testing"

	"ebb/internal/frame"
)

// auc is the ROC AUC of scores for labels (Mann–Whitney, ties counted ½).
func auc(t testing.TB, scores []float64, labels []uint8) float64 {
	t.Helper()
	idx := make([]int, len(scores))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return scores[idx[a]] < scores[idx[b]] })
	var rankSum, npos float64
	for lo := 0; lo < len(idx); {
		hi := lo
		for hi < len(idx) && scores[idx[hi]] == scores[idx[lo]] {
			hi++
		}
		mid := float64(lo+hi+1) / 2 // mean 1-based rank of the tie group
		for _, i := range idx[lo:hi] {
			if labels[i] == 1 {
				rankSum += mid
				npos++
			}
		}
		lo = hi
	}
	nneg := float64(len(scores)) - npos
	if npos == 0 || nneg == 0 {
		t.Fatalf("auc: %v positives, %v negatives", npos, nneg)
	}
	return (rankSum - npos*(npos+1)/2) / (npos * nneg)
}

func frameOf(t testing.TB, names []string, cols [][]float64, labels []uint8) *frame.Frame {
	t.Helper()
	f, err := frame.FromColumns(names, cols, labels, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	return f
}

func TestAUCHelper(t *testing.T) {
	// sklearn roc_auc_score([0,0,1,1], [0.1,0.4,0.35,0.8]) = 0.75 (its docstring).
	if got := auc(t, []float64{0.1, 0.4, 0.35, 0.8}, []uint8{0, 0, 1, 1}); !near(got, 0.75, 1e-15) {
		t.Errorf("auc = %v, want 0.75", got)
	}
	if got := auc(t, []float64{1, 1, 1, 1}, []uint8{0, 1, 0, 1}); !near(got, 0.5, 1e-15) {
		t.Errorf("auc of ties = %v, want 0.5", got)
	}
}

// One depth-1 tree on a step, worked by hand. x = 1…8, y = 0 for x ≤ 4 and
// 1 above. Base rate ½, so Init = 0, every p = ½, g = p − y = ±½, h = ¼.
// Left (x ≤ 4): G = 4·½ = 2, H = 1; right: G = −2, H = 1; root G = 0, H = 2.
// Leaf value −G/(H+λ)·η: with λ = 1, η = 1 → −1 and +1; gain 4/2 + 4/2 − 0 = 4,
// larger than any other cut (at 3.5: 2.25/1.75 + 2.25/2.25 ≈ 2.29). The
// threshold is the midpoint 4.5 of the neighbouring distinct values.
func TestTreesSingleSplitHandWorked(t *testing.T) {
	tests := []struct {
		name            string
		l2, lr          float64
		wantLeft, wantR float64
	}{
		{"lambda 1, rate 1", 1, 1, -1, 1},
		{"lambda 0, rate 0.5", 0, 0.5, -0.5 * 2 / 1, 0.5 * 2 / 1},
		{"lambda 3, rate 0.1", 3, 0.1, -0.1 * 2 / 4, 0.1 * 2 / 4},
	}
	x := []float64{3, 1, 8, 2, 6, 4, 7, 5}
	y := make([]uint8, len(x))
	for i, v := range x {
		if v > 4 {
			y[i] = 1
		}
	}
	f := frameOf(t, []string{"x"}, [][]float64{x}, y)
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			m, err := FitTrees(f, nil, TreesOptions{MaxIter: 1, MaxDepth: 1, MinSamplesLeaf: 1, L2: tc.l2, LearningRate: tc.lr})
			if err != nil {
				t.Fatal(err)
			}
			if m.Init != 0 || len(m.Trees) != 1 {
				t.Fatalf("init %v, %d trees; want 0, 1", m.Init, len(m.Trees))
			}
			nodes := m.Trees[0].Nodes
			if len(nodes) != 3 || nodes[0].Feature != 0 || nodes[0].Threshold != 4.5 {
				t.Fatalf("tree %+v, want one split at 4.5", nodes)
			}
			if nodes[0].Value != 0 {
				t.Errorf("root value %v, want 0 (G = 0)", nodes[0].Value)
			}
			l, r := nodes[nodes[0].Left], nodes[nodes[0].Right]
			if !near(l.Value, tc.wantLeft, 1e-15) || !near(r.Value, tc.wantR, 1e-15) || l.Rows != 4 || r.Rows != 4 {
				t.Errorf("leaves %+v %+v, want values %v, %v on 4 rows each", l, r, tc.wantLeft, tc.wantR)
			}
			p, err := m.Predict(frameOf(t, []string{"x"}, [][]float64{{4, 4.5, 4.6, -100, 100}}, nil), nil)
			if err != nil {
				t.Fatal(err)
			}
			want := []float64{sigmoid(tc.wantLeft), sigmoid(tc.wantLeft), sigmoid(tc.wantR), sigmoid(tc.wantLeft), sigmoid(tc.wantR)}
			for i := range want {
				if !near(p[i], want[i], 1e-15) {
					t.Errorf("P[%d] = %v, want %v", i, p[i], want[i])
				}
			}
		})
	}
}

// Bins: at most MaxBins non-missing bins with quantile edges, midpoints
// when there are few distinct values, and the binned route agrees with the
// threshold route for every value.
func TestBinEdges(t *testing.T) {
	if got := binEdges([]float64{1, 1, 2, 5, 5, 5}, 255); !slices.Equal(got, []float64{1.5, 3.5, noMoreEdge}) {
		t.Errorf("few distinct values: edges %v", got)
	}
	rng := rand.New(rand.NewPCG(3, 4))
	vals := make([]float64, 10000)
	for i := range vals {
		vals[i] = rng.NormFloat64()
	}
	slices.Sort(vals)
	e := binEdges(vals, 255)
	if len(e) > 255 || e[len(e)-1] != noMoreEdge {
		t.Fatalf("%d edges, last %v", len(e), e[len(e)-1])
	}
	// Quantile bins hold about n/255 ≈ 39 values each.
	counts := make([]int, len(e))
	for _, v := range vals {
		counts[binOf(v, e)]++
	}
	for b, c := range counts {
		if c < 30 || c > 50 {
			t.Errorf("bin %d holds %d of 10000 values, want about 39", b, c)
		}
	}
	for _, v := range vals {
		b := int(binOf(v, e))
		if v > e[b] || (b > 0 && v <= e[b-1]) {
			t.Fatalf("value %v in bin %d with edges %v, %v", v, b, e[max(b-1, 0)], e[b])
		}
	}
	if binOf(math.NaN(), e) != missingBin {
		t.Error("NaN not in the missing bin")
	}
}

// xorData: label = (x1 > 0) XOR (x2 > 0), flipped with probability 5%,
// plus two noise columns; x2 is missing in 10% of rows.
func xorData(t testing.TB, n int, seed uint64) *frame.Frame {
	t.Helper()
	rng := rand.New(rand.NewPCG(seed, 99))
	names := []string{"x1", "x2", "noise1", "noise2"}
	cols := make([][]float64, len(names))
	for j := range cols {
		cols[j] = make([]float64, n)
	}
	y := make([]uint8, n)
	for i := range n {
		for j := range cols {
			cols[j][i] = rng.NormFloat64()
		}
		if (cols[0][i] > 0) != (cols[1][i] > 0) {
			y[i] = 1
		}
		if rng.Float64() < 0.05 {
			y[i] ^= 1
		}
		if rng.Float64() < 0.1 {
			cols[1][i] = frame.Missing
		}
	}
	return frameOf(t, names, cols, y)
}

// Trees learn an interaction that a linear model cannot: the logistic model
// of this package is at chance on XOR.
func TestTreesLearnXORLogisticCannot(t *testing.T) {
	train, valid, test := xorData(t, 20000, 1), xorData(t, 5000, 2), xorData(t, 10000, 3)
	feats := train.Names()
	trees, err := TrainTrees(train, feats, valid, TreesOptions{})
	if err != nil {
		t.Fatal(err)
	}
	pt, err := trees.Predict(test)
	if err != nil {
		t.Fatal(err)
	}
	lr, err := TrainLogistic(train, feats, LogisticOptions{C: 1})
	if err != nil {
		t.Fatal(err)
	}
	pl, err := lr.Predict(test)
	if err != nil {
		t.Fatal(err)
	}
	at, al := auc(t, pt, test.Labels()), auc(t, pl, test.Labels())
	t.Logf("test AUC: trees %.4f (%d trees), logistic %.4f", at, len(trees.Trees.Trees), al)
	// Bayes AUC here is about 0.9 × (0.95 vs 0.05) plus the missing-x2
	// rows at chance; 0.9 is the brief's floor.
	if at < 0.9 {
		t.Errorf("trees AUC %.4f, want > 0.9", at)
	}
	if math.Abs(al-0.5) > 0.03 {
		t.Errorf("logistic AUC %.4f, want 0.5 ± 0.03", al)
	}
}

// Contributions plus bias equal the raw score for every row; a feature the
// trees never split on gets zero.
func TestTreesContributionsSumToRawScore(t *testing.T) {
	train, test := xorData(t, 5000, 5), xorData(t, 2000, 6)
	// A constant column is never split on.
	names := append(train.Names(), "constant")
	withConst := func(f *frame.Frame) *frame.Frame {
		cols := make([][]float64, 0, len(names))
		for j := range f.Cols() {
			cols = append(cols, f.ColAt(j))
		}
		c := make([]float64, f.Rows())
		for i := range c {
			c[i] = 7
		}
		return frameOf(t, names, append(cols, c), f.Labels())
	}
	train, test = withConst(train), withConst(test)
	m, err := TrainTrees(train, names, nil, TreesOptions{MaxIter: 60, LearningRate: 0.3})
	if err != nil {
		t.Fatal(err)
	}
	raw, err := m.Trees.RawScore(test, nil)
	if err != nil {
		t.Fatal(err)
	}
	bias, contrib, err := m.Contributions(test)
	if err != nil {
		t.Fatal(err)
	}
	p := len(names)
	var worst float64
	for i, r := range raw {
		s := bias
		for _, c := range contrib[i*p : (i+1)*p] {
			s += c
		}
		worst = max(worst, math.Abs(s-r))
		if contrib[i*p+p-1] != 0 {
			t.Fatalf("row %d: constant column contributes %v", i, contrib[i*p+p-1])
		}
	}
	// Sums of ~60 telescoping differences of values below 10: rounding only.
	t.Logf("largest |bias + Σ contributions − raw score| = %g over %d rows", worst, len(raw))
	if worst > 1e-12 {
		t.Errorf("|bias + Σ contributions − raw score| up to %g, want ≤ 1e-12", worst)
	}
	// The XOR features carry the signal: their mean |contribution| exceeds
	// the noise columns'.
	mean := make([]float64, p)
	for i := range raw {
		for j := range p {
			mean[j] += math.Abs(contrib[i*p+j]) / float64(len(raw))
		}
	}
	if min(mean[0], mean[1]) <= max(mean[2], mean[3]) {
		t.Errorf("mean |contribution| %v: x1, x2 should exceed the noise", mean)
	}
	if _, _, err := (&Model{Kind: KindLogistic}).Contributions(test); err == nil {
		t.Error("a logistic model without parameters gave contributions")
	}
}

// Same data and options give the same bytes, with one CPU or two, and
// enough rows for many histogram chunks.
func TestTreesDeterministic(t *testing.T) {
	train := synthetic(t, 5*histChunk+123, 6, 31)
	valid := synthetic(t, 5000, 6, 32)
	fit := func(procs int) []byte {
		t.Helper()
		old := runtime.GOMAXPROCS(procs)
		defer runtime.GOMAXPROCS(old)
		m, err := TrainTrees(train, train.Names(), valid, TreesOptions{MaxIter: 15, Seed: 4})
		if err != nil {
			t.Fatal(err)
		}
		if err := m.Calibrate(CalibrationIsotonic, valid); err != nil {
			t.Fatal(err)
		}
		b, err := m.Save()
		if err != nil {
			t.Fatal(err)
		}
		return b
	}
	a, b, c := fit(2), fit(2), fit(1)
	if string(a) != string(b) {
		t.Error("two fits with 2 CPUs differ")
	}
	if string(a) != string(c) {
		t.Error("fits with 1 and 2 CPUs differ")
	}
}

// Bin edges from a row sample: more rows than BinSample still bins, and
// the seed picks the sample.
func TestTreesBinSampleSeeded(t *testing.T) {
	train := synthetic(t, 3000, 4, 41)
	fit := func(seed uint64) *Trees {
		m, err := FitTrees(train, nil, TreesOptions{MaxIter: 3, BinSample: 500, MaxBins: 16, Seed: seed})
		if err != nil {
			t.Fatal(err)
		}
		return m
	}
	a, b, c := fit(1), fit(1), fit(2)
	thr := func(m *Trees) []float64 {
		var out []float64
		for _, tr := range m.Trees {
			for _, nd := range tr.Nodes {
				if nd.Feature >= 0 {
					out = append(out, nd.Threshold)
				}
			}
		}
		return out
	}
	if !slices.Equal(thr(a), thr(b)) {
		t.Error("same seed, different thresholds")
	}
	if slices.Equal(thr(a), thr(c)) {
		t.Error("different seeds gave the same thresholds from different 500-row samples")
	}
}

// Missingness predictive: the learned default direction sends missing
// values to the side whose rate they share.
func TestTreesMissingDefaultDirection(t *testing.T) {
	tests := []struct {
		name        string
		pMissing    float64 // P(y = 1) when x is missing
		wantMissing bool    // want missing routed with the high (x > 0.5) side
	}{
		{"missing like high x", 0.85, true},
		{"missing like low x", 0.05, false},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(8, 9))
			n := 4000
			x := make([]float64, n)
			y := make([]uint8, n)
			for i := range n {
				x[i] = rng.Float64()
				pr := 0.1
				if x[i] > 0.5 {
					pr = 0.8
				}
				if rng.Float64() < 0.3 {
					x[i] = frame.Missing
					pr = tc.pMissing
				}
				if rng.Float64() < pr {
					y[i] = 1
				}
			}
			f := frameOf(t, []string{"x"}, [][]float64{x}, y)
			m, err := FitTrees(f, nil, TreesOptions{MaxIter: 1, MaxDepth: 1, LearningRate: 1})
			if err != nil {
				t.Fatal(err)
			}
			root := m.Trees[0].Nodes[0]
			if root.Feature != 0 || math.Abs(root.Threshold-0.5) > 0.01 {
				t.Fatalf("root %+v, want a split near 0.5", root)
			}
			if root.MissingLeft == tc.wantMissing {
				t.Errorf("missing left = %v, want %v", root.MissingLeft, !tc.wantMissing)
			}
			// With more depth the model scores a missing row near its rate.
			m, err = FitTrees(f, nil, TreesOptions{MaxIter: 100})
			if err != nil {
				t.Fatal(err)
			}
			p, err := m.Predict(frameOf(t, []string{"x"}, [][]float64{{frame.Missing}}, nil), nil)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(p[0]-tc.pMissing) > 0.06 {
				t.Errorf("P(missing row) = %.3f, want %.2f ± 0.06", p[0], tc.pMissing)
			}
		})
	}
}

// Early stopping keeps the round with the lowest validation log loss and
// stops 10 rounds after it. Training does not read the validation frame
// except to stop, so a fit without it grows the same trees; its prefixes
// give the validation loss of every round.
func TestTreesEarlyStoppingKeepsBestRound(t *testing.T) {
	// Weak signal, few rows, fast rate: overfits within a few dozen rounds.
	train, valid := synthetic(t, 600, 6, 51), synthetic(t, 600, 6, 52)
	opt := TreesOptions{MaxIter: 500, LearningRate: 0.3, MinSamplesLeaf: 5}
	es, err := FitTrees(train, valid, opt)
	if err != nil {
		t.Fatal(err)
	}
	opt.MaxIter = es.Rounds
	full, err := FitTrees(train, nil, opt)
	if err != nil {
		t.Fatal(err)
	}
	if es.Rounds >= 500 || len(full.Trees) != es.Rounds {
		t.Fatalf("early stopping ran %d rounds (full fit %d trees)", es.Rounds, len(full.Trees))
	}
	losses := make([]float64, es.Rounds+1)
	for k := range losses {
		raw, err := full.rawScore(valid, nil, k)
		if err != nil {
			t.Fatal(err)
		}
		losses[k] = meanLogLoss(raw, valid.Labels())
	}
	best := 0
	for k, l := range losses {
		if l < losses[best] {
			best = k
		}
	}
	t.Logf("rounds %d, kept %d, validation log loss %.5f (round 0: %.5f)", es.Rounds, len(es.Trees), losses[best], losses[0])
	if len(es.Trees) != best || es.Rounds != best+10 {
		t.Errorf("kept %d trees after %d rounds, want the best round %d and %d rounds", len(es.Trees), es.Rounds, best, best+10)
	}
	if es.ValidLogLoss != losses[best] {
		t.Errorf("recorded validation loss %v, want %v", es.ValidLogLoss, losses[best])
	}
	for k := range es.Trees {
		if !slices.EqualFunc(es.Trees[k].Nodes, full.Trees[k].Nodes, func(a, b TreeNode) bool { return a == b }) {
			t.Fatalf("tree %d differs between the fits", k)
		}
	}
	// Training log loss falls round after round (Newton steps on a convex
	// loss with a small enough rate).
	prev := math.Inf(1)
	for k := 0; k <= es.Rounds; k += 5 {
		raw, _ := full.rawScore(train, nil, k)
		l := meanLogLoss(raw, train.Labels())
		if l >= prev {
			t.Errorf("training log loss %v at round %d, not below %v", l, k, prev)
		}
		prev = l
	}
}

// Breast cancer, train = first 400 rows, test = last 169, raw features,
// label malignant (shared reference §10, gbt.py): scikit-learn 1.2.1
// HistGradientBoostingClassifier() defaults reach test AUC 0.997041, log loss
// 0.089319; binning differs, so not an exact match. Floors: AUC ≥ 0.98 (the
// reference's suggested floor) and log loss ≤ 0.15 (a judgement: the
// sklearn figure plus room for different bins and depth limit).
func TestTreesBreastCancerReference(t *testing.T) {
	f := loadFrame(t, "breast_cancer.csv", breastCancerFeatures, "malignant")
	tr := make([]int, 400)
	te := make([]int, f.Rows()-400)
	for i := range tr {
		tr[i] = i
	}
	for i := range te {
		te[i] = 400 + i
	}
	train, err := f.Subset(tr)
	if err != nil {
		t.Fatal(err)
	}
	test, err := f.Subset(te)
	if err != nil {
		t.Fatal(err)
	}
	// sklearn's defaults: 100 rounds, rate 0.1, 31 leaves, 20 rows a leaf,
	// λ = 0, 255 bins, no early stopping below 10 000 rows.
	m, err := TrainTrees(train, breastCancerFeatures, nil, TreesOptions{MaxIter: 100, MaxDepth: 31})
	if err != nil {
		t.Fatal(err)
	}
	p, err := m.Predict(test)
	if err != nil {
		t.Fatal(err)
	}
	a := auc(t, p, test.Labels())
	var ll float64
	for i, q := range p {
		ll -= math.Log(map[uint8]float64{0: 1 - q, 1: q}[test.Labels()[i]])
	}
	ll /= float64(len(p))
	t.Logf("test AUC %.6f (sklearn 0.997041), log loss %.6f (sklearn 0.089319)", a, ll)
	if a < 0.98 {
		t.Errorf("test AUC %.6f, want ≥ 0.98", a)
	}
	if ll > 0.15 {
		t.Errorf("test log loss %.6f, want ≤ 0.15", ll)
	}
}

// A trees model saves, loads and predicts bit-identically, calibrated or
// not; Load refuses broken trees.
func TestTreesSaveLoad(t *testing.T) {
	train, valid, test := synthetic(t, 3000, 5, 61), synthetic(t, 1500, 5, 62), synthetic(t, 1500, 5, 63)
	for _, cal := range []CalibrationKind{"", CalibrationPlatt, CalibrationIsotonic} {
		t.Run(string(cal), func(t *testing.T) {
			m, err := TrainTrees(train, []string{"fb", "recency_days", "fa"}, valid, TreesOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if cal != "" {
				if err := m.Calibrate(cal, valid); err != nil {
					t.Fatal(err)
				}
			}
			m.Meta = Meta{DatasetVersion: "v3", Seed: 9}
			data, err := m.Save()
			if err != nil {
				t.Fatal(err)
			}
			back, err := Load(data)
			if err != nil {
				t.Fatal(err)
			}
			want, err := m.Predict(test)
			if err != nil {
				t.Fatal(err)
			}
			got, err := back.Predict(test)
			if err != nil {
				t.Fatal(err)
			}
			for i := range want {
				// Uncalibrated scores are σ(raw) ∈ (0, 1); isotonic may reach 0 or 1.
				inRange := want[i] > 0 && want[i] < 1 || cal == CalibrationIsotonic && want[i] >= 0 && want[i] <= 1
				if math.Float64bits(got[i]) != math.Float64bits(want[i]) || !inRange {
					t.Fatalf("row %d: %v reloaded, %v original", i, got[i], want[i])
				}
			}
			again, err := back.Save()
			if err != nil {
				t.Fatal(err)
			}
			if string(again) != string(data) {
				t.Error("save → load → save changed the bytes")
			}
		})
	}
	m, err := TrainTrees(train, train.Names(), nil, TreesOptions{MaxIter: 2})
	if err != nil {
		t.Fatal(err)
	}
	breaks := map[string]func(m *Model){
		"child before parent": func(m *Model) { m.Trees.Trees[0].Nodes[0].Left = 0 },
		"feature out of range": func(m *Model) {
			m.Trees.Trees[1].Nodes[0].Feature = int32(len(m.Features))
		},
		"features differ":  func(m *Model) { m.Features = []string{"fa"} },
		"mixed parameters": func(m *Model) { m.Baseline = &Baseline{Column: "x", X: 1} },
		"no trees":         func(m *Model) { m.Trees = nil },
	}
	for name, brk := range breaks {
		t.Run(name, func(t *testing.T) {
			data, err := m.Save()
			if err != nil {
				t.Fatal(err)
			}
			c, err := Load(data)
			if err != nil {
				t.Fatal(err)
			}
			brk(c)
			if _, err := c.Save(); err == nil {
				t.Error("saved a broken model")
			}
		})
	}
}

func TestFitTreesErrors(t *testing.T) {
	good := synthetic(t, 200, 3, 71)
	oneClass := frameOf(t, []string{"x"}, [][]float64{{1, 2, 3}}, []uint8{1, 1, 1})
	inf := frameOf(t, []string{"x"}, [][]float64{{1, math.Inf(1), 3}}, []uint8{0, 1, 0})
	tests := []struct {
		name  string
		train *frame.Frame
		valid *frame.Frame
		opt   TreesOptions
	}{
		{"one class", oneClass, nil, TreesOptions{}},
		{"infinite value", inf, nil, TreesOptions{}},
		{"no labels", frameOf(t, []string{"x"}, [][]float64{{1, 2}}, nil), nil, TreesOptions{}},
		{"too many bins", good, nil, TreesOptions{MaxBins: 256}},
		{"negative rate", good, nil, TreesOptions{LearningRate: -1}},
		{"one leaf", good, nil, TreesOptions{MaxLeaves: 1}},
		{"validation columns differ", good, oneClass, TreesOptions{}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := FitTrees(tc.train, tc.valid, tc.opt); err == nil {
				t.Error("no error")
			}
		})
	}
}

// 1M rows × 12 features, 100 trees of depth ≤ 6 (31 leaves), no early
// stopping. Frame generation is outside the timed loop.
func BenchmarkTrainTrees1Mx12(b *testing.B) {
	f := synthetic(b, 1_000_000, 12, 1)
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		m, err := TrainTrees(f, f.Names(), nil, TreesOptions{MaxIter: 100, MaxDepth: 6})
		if err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(float64(len(m.Trees.Trees)), "trees")
	}
}

func BenchmarkPredictTrees1Mx12(b *testing.B) {
	train := synthetic(b, 200_000, 12, 1)
	m, err := TrainTrees(train, train.Names(), nil, TreesOptions{MaxIter: 100})
	if err != nil {
		b.Fatal(err)
	}
	f := synthetic(b, 1_000_000, 12, 3)
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		if _, err := m.Predict(f); err != nil {
			b.Fatal(err)
		}
	}
}
