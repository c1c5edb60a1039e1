package model

import (
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"sort"
	"sync"
	"sync/atomic"

	"ebb/internal/frame"
)

// Gradient-boosted decision trees for a 0/1 label with the logistic loss,
// by the histogram method: every feature is cut into at most 255 bins (one
// byte a value, plus a bin of its own for missing values), and each node's
// best split is read off per-bin sums of gradients and hessians.

// TreesOptions control FitTrees. A zero field means its default.
type TreesOptions struct {
	// MaxIter is the number of boosting rounds (default 300).
	MaxIter int
	// LearningRate scales every tree's output (default 0.1).
	LearningRate float64
	// MaxDepth limits a tree's depth, the root being depth 0 (default 6).
	MaxDepth int
	// MaxLeaves limits a tree's leaves (default 31); leaves are split best
	// gain first.
	MaxLeaves int
	// MinSamplesLeaf is the least number of training rows in a leaf
	// (default 20).
	MinSamplesLeaf int
	// MinHessianLeaf is the least hessian sum Σ p(1−p) in a leaf
	// (default 1e-3).
	MinHessianLeaf float64
	// L2 is λ, the L2 penalty on leaf values: a leaf's value is
	// −G/(H+λ) (default 0, as scikit-learn's l2_regularization).
	L2 float64
	// MaxBins is the largest number of bins for non-missing values of a
	// feature, 2 to 255 (default 255).
	MaxBins int
	// BinSample is the number of rows, drawn at random with Seed, whose
	// values set the bin edges (default 200 000; all rows when fewer).
	BinSample int
	// EarlyStoppingRounds: with a validation frame, training stops after
	// this many rounds without a lower validation log loss, and the trees
	// of the best round are kept (default 10).
	EarlyStoppingRounds int
	// Seed seeds the row sample for the bin edges.
	Seed uint64
}

func (o TreesOptions) withDefaults() (TreesOptions, error) {
	def := func(v *int, d int) {
		if *v == 0 {
			*v = d
		}
	}
	def(&o.MaxIter, 300)
	def(&o.MaxDepth, 6)
	def(&o.MaxLeaves, 31)
	def(&o.MinSamplesLeaf, 20)
	def(&o.MaxBins, 255)
	def(&o.BinSample, 200_000)
	def(&o.EarlyStoppingRounds, 10)
	if o.LearningRate == 0 {
		o.LearningRate = 0.1
	}
	if o.MinHessianLeaf == 0 {
		o.MinHessianLeaf = 1e-3
	}
	switch {
	case o.MaxIter < 0, o.MaxDepth < 0, o.MaxLeaves < 0, o.MinSamplesLeaf < 0, o.BinSample < 0, o.EarlyStoppingRounds < 0:
		return o, fmt.Errorf("tree options: negative count in %+v", o)
	case !(o.LearningRate > 0) || math.IsInf(o.LearningRate, 0):
		return o, fmt.Errorf("tree options: learning rate %v, want > 0", o.LearningRate)
	case o.MaxLeaves < 2:
		return o, fmt.Errorf("tree options: max leaves %d, want ≥ 2", o.MaxLeaves)
	case o.MaxBins < 2 || o.MaxBins > maxBins:
		return o, fmt.Errorf("tree options: max bins %d, want 2 to %d", o.MaxBins, maxBins)
	case !(o.MinHessianLeaf >= 0) || !(o.L2 >= 0) || math.IsInf(o.L2, 0):
		return o, fmt.Errorf("tree options: min hessian %v or L2 %v not ≥ 0", o.MinHessianLeaf, o.L2)
	}
	return o, nil
}

const (
	// maxBins is the most bins a feature's non-missing values get;
	// missingBin is the bin of missing values.
	maxBins    = 255
	missingBin = 255
	histBins   = 256
	// histChunk is the number of rows one worker sums into its own
	// histogram; partial histograms are added in chunk order, so results do
	// not depend on the number of workers.
	histChunk = 16384
	// noMoreEdge is the upper edge of the last bin: every finite value is
	// at most this (training refuses infinite values).
	noMoreEdge = math.MaxFloat64
)

// TreeNode is one node of a tree. Internal nodes send a row to Left when its
// value of Feature is ≤ Threshold, to Right when above, and a missing value
// to Left when MissingLeft. Value is the node's output had it been a leaf
// (−G/(H+λ) times the learning rate): the tree's output at a leaf, and at an
// internal node the expected value the path-based contributions start from.
type TreeNode struct {
	Feature     int32   `json:"f"` // −1 for a leaf
	Threshold   float64 `json:"t"`
	MissingLeft bool    `json:"m"`
	Left        int32   `json:"l"`
	Right       int32   `json:"r"`
	Value       float64 `json:"v"`
	// Rows is the number of training rows that reached the node.
	Rows int32 `json:"n"`
}

// Tree is one regression tree; Nodes[0] is the root, and children come
// after their parent.
type Tree struct {
	Nodes []TreeNode `json:"nodes"`
}

// Trees is a fitted boosted-tree model: raw score = Init + Σ tree outputs,
// P(y = 1) = σ(raw score).
type Trees struct {
	// Features are the columns the trees read; TreeNode.Feature indexes them.
	Features []string `json:"features"`
	// Init is the raw score before any tree: the log-odds of the training
	// base rate.
	Init         float64 `json:"init"`
	LearningRate float64 `json:"learning_rate"`
	Trees        []Tree  `json:"trees"`
	// Rounds is the number of boosting rounds run; with early stopping it
	// exceeds len(Trees), which keeps the best round.
	Rounds int `json:"rounds"`
	// ValidLogLoss is the mean validation log loss of the kept trees, 0
	// when trained without a validation frame.
	ValidLogLoss float64 `json:"valid_log_loss,omitempty"`
}

// binned is a frame cut into bins: row-major, one byte a value.
type binned struct {
	rows, cols int
	x          []uint8
	edges      [][]float64 // per feature, the upper edge of each bin
}

// binEdges returns the upper bin edges of one feature from sorted
// non-missing sample values: midpoints between distinct values when there
// are at most nb of them, else sample quantiles; the last edge is noMoreEdge.
func binEdges(sorted []float64, nb int) []float64 {
	distinct := make([]float64, 0, nb+1)
	for i, v := range sorted {
		if i == 0 || v != sorted[i-1] {
			distinct = append(distinct, v)
			if len(distinct) > nb {
				break
			}
		}
	}
	var edges []float64
	if len(distinct) <= nb {
		for k := 1; k < len(distinct); k++ {
			edges = append(edges, distinct[k-1]/2+distinct[k]/2)
		}
	} else {
		n := len(sorted)
		for k := 1; k < nb; k++ {
			e := sorted[k*n/nb]
			if len(edges) == 0 || e > edges[len(edges)-1] {
				edges = append(edges, e)
			}
		}
	}
	if len(edges) > 0 && edges[len(edges)-1] >= noMoreEdge {
		edges = edges[:len(edges)-1]
	}
	return append(edges, noMoreEdge)
}

// binFrame learns bin edges on a seeded sample of f's rows and bins f.
func binFrame(f *frame.Frame, opt TreesOptions) (*binned, error) {
	n, p := f.Rows(), f.Cols()
	if p > 0 && n > 0 && n > math.MaxInt32 {
		return nil, fmt.Errorf("bin features: %d rows, at most %d", n, math.MaxInt32)
	}
	sample := make([]int, 0, min(n, opt.BinSample))
	if n <= opt.BinSample {
		for i := range n {
			sample = append(sample, i)
		}
	} else {
		// Partial Fisher–Yates: the first BinSample entries of a seeded
		// permutation.
		perm := make([]int32, n)
		for i := range perm {
			perm[i] = int32(i)
		}
		rng := rand.New(rand.NewPCG(opt.Seed, 0x6762742d62696e73))
		for k := range opt.BinSample {
			j := k + rng.IntN(n-k)
			perm[k], perm[j] = perm[j], perm[k]
			sample = append(sample, int(perm[k]))
		}
	}
	b := &binned{rows: n, cols: p, x: make([]uint8, n*p), edges: make([][]float64, p)}
	vals := make([]float64, 0, len(sample))
	for j := range p {
		col := f.ColAt(j)
		for i, v := range col {
			if math.IsInf(v, 0) {
				return nil, fmt.Errorf("bin features: column %q row %d is %v", f.Name(j), i, v)
			}
		}
		vals = vals[:0]
		for _, i := range sample {
			if v := col[i]; v == v {
				vals = append(vals, v)
			}
		}
		slices.Sort(vals)
		b.edges[j] = binEdges(vals, opt.MaxBins)
	}
	parallelChunks(n, func(lo, hi int) {
		for j := range p {
			col, edges := f.ColAt(j), b.edges[j]
			for i := lo; i < hi; i++ {
				b.x[i*p+j] = binOf(col[i], edges)
			}
		}
	})
	return b, nil
}

func binOf(v float64, edges []float64) uint8 {
	if v != v {
		return missingBin
	}
	return uint8(sort.SearchFloat64s(edges, v))
}

// parallelChunks calls fn on the fixed row chunks [lo, hi) of [0, n), on up
// to GOMAXPROCS goroutines. fn must write only to its own rows.
func parallelChunks(n int, fn func(lo, hi int)) {
	nch := (n + histChunk - 1) / histChunk
	workers := min(runtime.GOMAXPROCS(0), nch)
	if workers <= 1 {
		for c := range nch {
			fn(c*histChunk, min((c+1)*histChunk, n))
		}
		return
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for range workers {
		wg.Go(func() {
			for {
				c := int(next.Add(1) - 1)
				if c >= nch {
					return
				}
				fn(c*histChunk, min((c+1)*histChunk, n))
			}
		})
	}
	wg.Wait()
}

type rowGradHess struct{ g, h float64 }

// binStat is the gradient sum, hessian sum and row count of one bin.
type binStat struct {
	g, h float64
	n    int64
}

// split is a candidate split of a node.
type split struct {
	ok          bool
	gain        float64
	feature     int
	bin         int // rows with a non-missing bin ≤ bin go left
	missingLeft bool
	gl, hl      float64
	nl          int64
}

// leaf is a leaf of the tree being grown that may still be split.
type leaf struct {
	node   int
	buf    int // its rows are grower.rows[buf][lo:hi]
	lo, hi int
	depth  int
	hist   []binStat
	g, h   float64
	n      int64
	best   split
}

// grower grows one tree at a time on binned training data.
type grower struct {
	b   *binned
	opt TreesOptions
	gh  []rowGradHess // gradient and hessian of each row, side by side
	// rows[k] lists the row numbers of each leaf in a contiguous range;
	// ox and ogh hold the binned rows and gh in that order, so that
	// histograms read memory sequentially. Bins are packed eight to a word,
	// w words a row; packed is the training data in row order. Each of the
	// three has two buffers: a partition reads a leaf's range from its
	// buffer and writes the children to the same range of the other.
	rows   [2][]int32
	w      int
	packed []uint64
	ox     [2][]uint64
	ogh    [2][]rowGradHess
	parts  [][]binStat // one partial histogram per chunk
	free   [][]binStat // histograms of leaves no longer needed
}

func (g *grower) newHist() []binStat {
	if k := len(g.free); k > 0 {
		h := g.free[k-1]
		g.free = g.free[:k-1]
		return h
	}
	return make([]binStat, g.b.cols*histBins)
}

// build sums the gradients and hessians of rows into dst by feature and
// bin: chunks of histChunk rows in parallel, each into its own partial
// histogram, then the partials added in chunk order.
func (g *grower) build(buf, lo, hi int, dst []binStat) {
	clear(dst)
	w := g.w
	ox, gh := g.ox[buf][lo*w:hi*w], g.ogh[buf][lo:hi]
	n := hi - lo
	nch := (n + histChunk - 1) / histChunk
	if nch <= 1 {
		g.accumulate(ox, gh, dst)
		return
	}
	for len(g.parts) < nch {
		g.parts = append(g.parts, make([]binStat, len(dst)))
	}
	parallelChunks(n, func(lo, hi int) {
		part := g.parts[lo/histChunk]
		clear(part)
		g.accumulate(ox[lo*w:hi*w], gh[lo:hi], part)
	})
	for c := range nch {
		for k, s := range g.parts[c] {
			d := &dst[k]
			d.g += s.g
			d.h += s.h
			d.n += s.n
		}
	}
}

func (g *grower) accumulate(ox []uint64, ghs []rowGradHess, dst []binStat) {
	p, w := g.b.cols, g.w
	dst = dst[:p*histBins]
	ox = ox[:len(ghs)*w]
	for k, gh := range ghs {
		row := ox[k*w : k*w+w]
		for j := range p {
			s := &dst[j*histBins+int(uint8(row[j>>3]>>(8*(j&7))))]
			s.g += gh.g
			s.h += gh.h
			s.n++
		}
	}
}

// value is a node's output: −G/(H+λ) times the learning rate.
func (g *grower) value(gs, hs float64) float64 {
	d := hs + g.opt.L2
	if d <= 0 {
		return 0
	}
	return -gs / d * g.opt.LearningRate
}

func (g *grower) score(gs, hs float64) float64 {
	d := hs + g.opt.L2
	if d <= 0 {
		return 0
	}
	return gs * gs / d
}

// findSplit sets l.best to the split of largest gain
// G_L²/(H_L+λ) + G_R²/(H_R+λ) − G²/(H+λ) that leaves at least
// MinSamplesLeaf rows and MinHessianLeaf hessian on each side. Candidates are
// tried in a fixed order and only a strictly larger gain replaces the best,
// so ties go to the first.
func (g *grower) findSplit(l *leaf) {
	l.best = split{}
	minN := int64(max(g.opt.MinSamplesLeaf, 1))
	if l.depth >= g.opt.MaxDepth || l.n < 2*minN {
		return
	}
	parent := g.score(l.g, l.h)
	minH := g.opt.MinHessianLeaf
	try := func(f, bin int, missingLeft bool, gl, hl float64, nl int64) {
		gr, hr, nr := l.g-gl, l.h-hl, l.n-nl
		if nl < minN || nr < minN || hl < minH || hr < minH {
			return
		}
		gain := g.score(gl, hl) + g.score(gr, hr) - parent
		if gain > 0 && (!l.best.ok || gain > l.best.gain) {
			l.best = split{ok: true, gain: gain, feature: f, bin: bin, missingLeft: missingLeft, gl: gl, hl: hl, nl: nl}
		}
	}
	for f := range g.b.cols {
		h := l.hist[f*histBins : (f+1)*histBins]
		miss := h[missingBin]
		nb := len(g.b.edges[f])
		var cg, ch float64
		var cn int64
		for bin := 0; bin < nb; bin++ {
			s := h[bin]
			if s.n == 0 {
				continue
			}
			cg, ch, cn = cg+s.g, ch+s.h, cn+s.n
			if cn+miss.n == l.n && miss.n == 0 {
				break // every row is left of this bin
			}
			if miss.n == 0 {
				// No missing value here: at scoring, missing values go to
				// the side with more training rows.
				try(f, bin, cn >= l.n-cn, cg, ch, cn)
				continue
			}
			try(f, bin, false, cg, ch, cn)
			if cn+miss.n < l.n {
				try(f, bin, true, cg+miss.g, ch+miss.h, cn+miss.n)
			}
		}
	}
}

// partition reorders rows lo…hi−1 (with their gradients and bins) so that
// those going left under s come first, each side keeping its order, and
// returns how many go left. Fixed chunks are counted, then scattered to
// their offsets, in parallel; the result is the sequential stable partition.
func (g *grower) partition(buf, lo, hi int, s split) int {
	w := g.w
	fw, shift := s.feature/8, 8*uint(s.feature%8)
	sb, ml := uint8(s.bin), s.missingLeft
	goesLeft := func(bin uint8) bool { return (bin == missingBin && ml) || (bin != missingBin && bin <= sb) }
	mlb := b2i(ml)
	m := hi - lo
	rows, gh, ox := g.rows[buf][lo:hi], g.ogh[buf][lo:hi], g.ox[buf][lo*w:hi*w]
	nch := (m + histChunk - 1) / histChunk
	lefts := make([]int, nch+1)
	parallelChunks(m, func(a, b int) {
		var c int
		for k := a; k < b; k++ {
			if goesLeft(uint8(ox[k*w+fw] >> shift)) {
				c++
			}
		}
		lefts[a/histChunk+1] = c
	})
	for c := range nch {
		lefts[c+1] += lefts[c]
	}
	nl := lefts[nch]
	o := 1 - buf
	trows, tgh, tox := g.rows[o][lo:hi], g.ogh[o][lo:hi], g.ox[o][lo*w:hi*w]
	parallelChunks(m, func(a, b int) {
		c := a / histChunk
		li, ri := lefts[c], nl+a-lefts[c]
		for k := a; k < b; k++ {
			row := ox[k*w : k*w+w]
			// Branch-free: the side is a coin flip for the predictor.
			bin := uint8(row[fw] >> shift)
			lb := b2i(bin <= sb) | b2i(bin == missingBin)&mlb
			d := ri + lb*(li-ri)
			li += lb
			ri += 1 - lb
			trows[d] = rows[k]
			tgh[d] = gh[k]
			dst := tox[d*w : d*w+w]
			for j, v := range row {
				dst[j] = v
			}
		}
	})
	return nl
}

func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}

// grow fits one tree to g.gh and adds its output to raw.
func (g *grower) grow(raw []float64) Tree {
	n := g.b.rows
	for i := range g.rows[0] {
		g.rows[0][i] = int32(i)
	}
	root := &leaf{node: 0, lo: 0, hi: n, hist: g.newHist()}
	copy(g.ogh[0], g.gh)
	copy(g.ox[0], g.packed)
	g.build(0, 0, n, root.hist)
	for _, s := range root.hist[:histBins] { // feature 0 holds every row once
		root.g += s.g
		root.h += s.h
		root.n += s.n
	}
	t := Tree{Nodes: []TreeNode{{Feature: -1, Value: g.value(root.g, root.h), Rows: int32(n)}}}
	g.findSplit(root)
	leaves := []*leaf{root}
	for len(leaves) < g.opt.MaxLeaves {
		bi := -1
		for i, l := range leaves {
			if l.best.ok && (bi < 0 || l.best.gain > leaves[bi].best.gain) {
				bi = i
			}
		}
		if bi < 0 {
			break
		}
		l := leaves[bi]
		s := l.best
		nl := g.partition(l.buf, l.lo, l.hi, s)
		left := &leaf{buf: 1 - l.buf, lo: l.lo, hi: l.lo + nl, depth: l.depth + 1, g: s.gl, h: s.hl, n: s.nl}
		rght := &leaf{buf: 1 - l.buf, lo: l.lo + nl, hi: l.hi, depth: l.depth + 1, g: l.g - s.gl, h: l.h - s.hl, n: l.n - s.nl}
		// Subtraction trick: sum the smaller child, take the larger as
		// parent − smaller in the parent's histogram.
		small, large := left, rght
		if rght.n < left.n {
			small, large = rght, left
		}
		small.hist = g.newHist()
		g.build(small.buf, small.lo, small.hi, small.hist)
		large.hist = l.hist
		for k, c := range small.hist {
			d := &large.hist[k]
			d.g -= c.g
			d.h -= c.h
			d.n -= c.n
		}
		left.node, rght.node = len(t.Nodes), len(t.Nodes)+1
		nd := &t.Nodes[l.node]
		nd.Feature = int32(s.feature)
		nd.Threshold = g.b.edges[s.feature][s.bin]
		nd.MissingLeft = s.missingLeft
		nd.Left, nd.Right = int32(left.node), int32(rght.node)
		t.Nodes = append(t.Nodes,
			TreeNode{Feature: -1, Value: g.value(left.g, left.h), Rows: int32(left.n)},
			TreeNode{Feature: -1, Value: g.value(rght.g, rght.h), Rows: int32(rght.n)})
		g.findSplit(left)
		g.findSplit(rght)
		leaves[bi] = left
		leaves = slices.Insert(leaves, bi+1, rght)
	}
	for _, l := range leaves {
		v := t.Nodes[l.node].Value
		for _, r := range g.rows[l.buf][l.lo:l.hi] {
			raw[r] += v
		}
		g.free = append(g.free, l.hist)
	}
	return t
}

// FitTrees fits boosted trees of train's labels on all of train's columns.
// With a validation frame (same columns, with labels) training stops after
// EarlyStoppingRounds rounds without a lower validation log loss and keeps
// the best round's trees; valid may be nil. Missing values (NaN) get a bin
// of their own; infinite values are refused. The same data and options give
// the same model whatever the number of CPUs.
func FitTrees(train, valid *frame.Frame, opt TreesOptions) (*Trees, error) {
	opt, err := opt.withDefaults()
	if err != nil {
		return nil, fmt.Errorf("fit trees: %w", err)
	}
	n := train.Rows()
	y := train.Labels()
	if y == nil {
		return nil, fmt.Errorf("fit trees: training frame has no labels")
	}
	if n == 0 || train.Cols() == 0 {
		return nil, fmt.Errorf("fit trees: %d rows, %d columns", n, train.Cols())
	}
	var npos int
	for _, v := range y {
		npos += int(v)
	}
	if npos == 0 || npos == n {
		return nil, fmt.Errorf("fit trees: all %d labels are %d", n, y[0])
	}
	m := &Trees{Features: train.Names(), Init: math.Log(float64(npos) / float64(n-npos)), LearningRate: opt.LearningRate}
	var vraw []float64
	if valid != nil {
		if valid.Labels() == nil || valid.Rows() == 0 {
			return nil, fmt.Errorf("fit trees: validation frame has no labels or rows")
		}
		if !equalStrings(valid.Names(), m.Features) {
			return nil, fmt.Errorf("fit trees: validation columns %q differ from training %q", valid.Names(), m.Features)
		}
		vraw = make([]float64, valid.Rows())
		for i := range vraw {
			vraw[i] = m.Init
		}
	}
	b, err := binFrame(train, opt)
	if err != nil {
		return nil, fmt.Errorf("fit trees: %w", err)
	}
	g := &grower{b: b, opt: opt, gh: make([]rowGradHess, n), w: (b.cols + 7) / 8}
	g.packed = make([]uint64, n*g.w)
	for k := range 2 {
		g.rows[k] = make([]int32, n)
		g.ogh[k] = make([]rowGradHess, n)
		g.ox[k] = make([]uint64, n*g.w)
	}
	for i := range n {
		for j, bin := range b.x[i*b.cols : (i+1)*b.cols] {
			g.packed[i*g.w+j/8] |= uint64(bin) << (8 * uint(j%8))
		}
	}
	raw := make([]float64, n)
	for i := range raw {
		raw[i] = m.Init
	}
	var vcols [][]float64
	if valid != nil {
		vcols = columns(valid, m.Features)
	}
	best, bestLoss := 0, math.Inf(1)
	if valid != nil {
		bestLoss = meanLogLoss(vraw, valid.Labels())
	}
	for round := 1; round <= opt.MaxIter; round++ {
		parallelChunks(n, func(lo, hi int) {
			for i := lo; i < hi; i++ {
				p := sigmoid(raw[i])
				g.gh[i] = rowGradHess{p - float64(y[i]), p * (1 - p)}
			}
		})
		t := g.grow(raw)
		m.Trees = append(m.Trees, t)
		m.Rounds = round
		if valid == nil {
			continue
		}
		for i := range vraw {
			vraw[i] += t.output(vcols, i)
		}
		if l := meanLogLoss(vraw, valid.Labels()); l < bestLoss {
			best, bestLoss = round, l
		} else if round-best >= opt.EarlyStoppingRounds {
			break
		}
	}
	if valid != nil {
		m.Trees = m.Trees[:best:best]
		m.ValidLogLoss = bestLoss
	}
	return m, nil
}

func meanLogLoss(raw []float64, y []uint8) float64 {
	var s float64
	for i, e := range raw {
		s += logLoss(e, y[i])
	}
	return s / float64(len(raw))
}

// columns returns f's columns named names; the caller has checked they
// exist.
func columns(f *frame.Frame, names []string) [][]float64 {
	cols := make([][]float64, len(names))
	for j, name := range names {
		cols[j], _ = f.Col(name)
	}
	return cols
}

func (m *Trees) columns(f *frame.Frame) ([][]float64, error) {
	for _, name := range m.Features {
		if f.Index(name) < 0 {
			return nil, fmt.Errorf("trees: frame has no column %q", name)
		}
	}
	return columns(f, m.Features), nil
}

// leafOf returns the index of the leaf row i reaches.
func (t *Tree) leafOf(cols [][]float64, i int) int {
	k := 0
	for {
		nd := &t.Nodes[k]
		if nd.Feature < 0 {
			return k
		}
		v := cols[nd.Feature][i]
		if v != v {
			if nd.MissingLeft {
				k = int(nd.Left)
			} else {
				k = int(nd.Right)
			}
		} else if v <= nd.Threshold {
			k = int(nd.Left)
		} else {
			k = int(nd.Right)
		}
	}
}

func (t *Tree) output(cols [][]float64, i int) float64 { return t.Nodes[t.leafOf(cols, i)].Value }

// RawScore returns Init + Σ tree outputs (the log-odds) of every row of f
// into dst, reusing it when it has room.
func (m *Trees) RawScore(f *frame.Frame, dst []float64) ([]float64, error) {
	return m.rawScore(f, dst, len(m.Trees))
}

func (m *Trees) rawScore(f *frame.Frame, dst []float64, ntrees int) ([]float64, error) {
	cols, err := m.columns(f)
	if err != nil {
		return nil, err
	}
	dst = grow(dst, f.Rows())
	// Rows in parallel chunks, and within a chunk blocks of predictBlock
	// rows through every tree, so the block's values stay in cache. Each
	// row still sums Init then the trees in order.
	parallelChunks(len(dst), func(lo, hi int) {
		for i := lo; i < hi; i++ {
			dst[i] = m.Init
		}
		for a := lo; a < hi; a += predictBlock {
			b := min(a+predictBlock, hi)
			for k := range ntrees {
				t := &m.Trees[k]
				for i := a; i < b; i++ {
					dst[i] += t.output(cols, i)
				}
			}
		}
	})
	return dst, nil
}

const predictBlock = 512

// Predict returns P(y = 1) = σ(raw score) for every row of f into dst.
func (m *Trees) Predict(f *frame.Frame, dst []float64) ([]float64, error) {
	dst, err := m.RawScore(f, dst)
	if err != nil {
		return nil, err
	}
	for i, e := range dst {
		dst[i] = sigmoid(e)
	}
	return dst, nil
}

// Contributions returns the path-based (Saabas) attribution of every row's
// raw score to the features: walking each tree from the root to the row's
// leaf, the change in node value at each split is credited to the split's
// feature. contrib is row-major, len(Features) values a row; bias is the
// expected raw score, Init + Σ root values. For every row,
// bias + Σ contrib equals the raw score up to rounding.
func (m *Trees) Contributions(f *frame.Frame) (bias float64, contrib []float64, err error) {
	cols, err := m.columns(f)
	if err != nil {
		return 0, nil, err
	}
	p := len(m.Features)
	bias = m.Init
	for k := range m.Trees {
		bias += m.Trees[k].Nodes[0].Value
	}
	contrib = make([]float64, f.Rows()*p)
	for k := range m.Trees {
		nodes := m.Trees[k].Nodes
		for i := range f.Rows() {
			c := contrib[i*p : (i+1)*p]
			j := 0
			for nodes[j].Feature >= 0 {
				nd := &nodes[j]
				v := cols[nd.Feature][i]
				var next int32
				switch {
				case v != v && nd.MissingLeft, v == v && v <= nd.Threshold:
					next = nd.Left
				default:
					next = nd.Right
				}
				c[nd.Feature] += nodes[next].Value - nd.Value
				j = int(next)
			}
		}
	}
	return bias, contrib, nil
}

func (m *Trees) validate() error {
	if len(m.Features) == 0 {
		return fmt.Errorf("trees: no features")
	}
	seen := make(map[string]bool, len(m.Features))
	for _, name := range m.Features {
		if name == "" || seen[name] {
			return fmt.Errorf("trees: feature %q empty or repeated", name)
		}
		seen[name] = true
	}
	if !finite(m.Init) || !(m.LearningRate > 0) || !finite(m.LearningRate) {
		return fmt.Errorf("trees: init %v or learning rate %v invalid", m.Init, m.LearningRate)
	}
	if m.Rounds < len(m.Trees) {
		return fmt.Errorf("trees: %d rounds for %d trees", m.Rounds, len(m.Trees))
	}
	if !finite(m.ValidLogLoss) || m.ValidLogLoss < 0 {
		return fmt.Errorf("trees: validation log loss %v", m.ValidLogLoss)
	}
	for k, t := range m.Trees {
		nn := int32(len(t.Nodes))
		if nn == 0 {
			return fmt.Errorf("trees: tree %d has no nodes", k)
		}
		for j, nd := range t.Nodes {
			if !finite(nd.Value) {
				return fmt.Errorf("trees: tree %d node %d value %v", k, j, nd.Value)
			}
			if nd.Feature < 0 {
				if nd.Feature != -1 {
					return fmt.Errorf("trees: tree %d node %d feature %d", k, j, nd.Feature)
				}
				continue
			}
			if int(nd.Feature) >= len(m.Features) || nd.Threshold != nd.Threshold {
				return fmt.Errorf("trees: tree %d node %d splits on feature %d at %v", k, j, nd.Feature, nd.Threshold)
			}
			// Children come after their parent, so every walk ends.
			if nd.Left <= int32(j) || nd.Right <= int32(j) || nd.Left >= nn || nd.Right >= nn || nd.Left == nd.Right {
				return fmt.Errorf("trees: tree %d node %d has children %d, %d", k, j, nd.Left, nd.Right)
			}
		}
	}
	return nil
}

// TrainTrees fits boosted trees on the named features of train, early
// stopping on valid when it is not nil; the result is uncalibrated and
// scores P(y = 1).
func TrainTrees(train *frame.Frame, features []string, valid *frame.Frame, opt TreesOptions) (*Model, error) {
	raw, err := train.Select(features)
	if err != nil {
		return nil, fmt.Errorf("train trees: %w", err)
	}
	var v *frame.Frame
	if valid != nil {
		if v, err = valid.Select(features); err != nil {
			return nil, fmt.Errorf("train trees: validation: %w", err)
		}
	}
	t, err := FitTrees(raw, v, opt)
	if err != nil {
		return nil, fmt.Errorf("train trees: %w", err)
	}
	return &Model{Kind: KindTrees, Features: append([]string(nil), features...), Trees: t}, nil
}
