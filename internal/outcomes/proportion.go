package outcomes

import (
	"math"

	"ebb/internal/problem"
)

// Z95 is the two-sided 95% normal quantile qnorm(0.975) as R prints it to
// 16 significant digits, the value the reference tables use. gonum's
// distuv.UnitNormal.Quantile(0.975) is 1.9599639845400536, within 5e-16.
const Z95 = 1.959963984540054

// Wilson returns Wilson's (1927) score interval for the proportion x/n at
// the normal quantile z (Z95 for 95%). Both limits lie in [0, 1]; lo is
// exactly 0 when x = 0 and hi exactly 1 when x = n. It is an Invalid
// problem when n ≤ 0, x is outside [0, n] or z is not a positive number.
func Wilson(x, n int, z float64) (lo, hi float64, err error) {
	if err := checkCount("", x, n, z); err != nil {
		return 0, 0, err
	}
	lo, hi = wilson(x, n, z)
	return lo, hi, nil
}

// wilson is Wilson on checked input.
func wilson(x, n int, z float64) (lo, hi float64) {
	nf, xf, z2 := float64(n), float64(x), z*z
	den := 2 * (nf + z2)
	centre := (2*xf + z2) / den
	half := z * math.Sqrt(z2+4*xf*(nf-xf)/nf) / den
	lo, hi = max(centre-half, 0), min(centre+half, 1)
	if x == 0 {
		lo = 0
	}
	if x == n {
		hi = 1
	}
	return lo, hi
}

// NewcombeDiff returns d = x1/n1 − x2/n2 (group 1 minus group 2; in ebb
// contacted minus holdout) and Newcombe's (1998) hybrid score interval for
// it, method 10, without continuity correction, at the normal quantile z.
// The limits lie in [−1, 1]. Errors are as for Wilson, naming the group.
func NewcombeDiff(x1, n1, x2, n2 int, z float64) (d, lo, hi float64, err error) {
	if err := checkCount("group 1", x1, n1, z); err != nil {
		return 0, 0, 0, err
	}
	if err := checkCount("group 2", x2, n2, z); err != nil {
		return 0, 0, 0, err
	}
	p1, p2 := float64(x1)/float64(n1), float64(x2)/float64(n2)
	l1, u1 := wilson(x1, n1, z)
	l2, u2 := wilson(x2, n2, z)
	d = p1 - p2
	lo = d - math.Hypot(p1-l1, u2-p2)
	hi = d + math.Hypot(u1-p1, p2-l2)
	return d, lo, hi, nil
}

func checkCount(group string, x, n int, z float64) error {
	of := ""
	if group != "" {
		of = " in " + group
	}
	switch {
	case n <= 0:
		return problem.New(problem.Invalid, "A proportion needs at least one customer%s, not %d.", of, n)
	case x < 0 || x > n:
		return problem.New(problem.Invalid, "%d of %d customers%s is not a proportion: the count must lie between 0 and %d.", x, n, of, n)
	case !(z > 0) || math.IsInf(z, 0):
		return problem.New(problem.Invalid, "The normal quantile of an interval must be a positive number, not %v.", z)
	}
	return nil
}
