package lists

import (
	"crypto/hmac"
	"crypto/sha256"
	"encoding/binary"
	"math"

	"ebb/internal/civil"
	"ebb/internal/problem"
)

// periodOrigin is the first day of holdout period 0: Monday 2001-01-01.
// Periods are counted from this fixed day rather than from any list's date,
// so every list of a dataset, drafted on any day, sees the same periods, and
// with whole-week periods every period starts on a Monday.
const periodOrigin civil.Date = 11323 // 2001-01-01

// MinSaltBytes is the shortest holdout salt Validate accepts (128 bits).
const MinSaltBytes = 16

// Holdout decides which customers are withheld from contact: a customer is
// in the holdout of a period when a keyed hash of its key and the period
// falls under Share. Membership is per customer and period, not per list,
// so a holdout customer is withheld from every list drafted in that period.
//
// A period lasts PeriodDays ≥ H days, yet a customer held out on a list
// late in one period can be drawn for contact early in the next, before its
// own horizon has closed. Callers that need every held-out customer
// untreated for a full horizon also withhold customers held out on a list
// dated in the last H days (compose that into Select's inHoldout).
type Holdout struct {
	Salt       []byte  // the dataset's secret key, at least MinSaltBytes long
	Share      float64 // share of customers held out, in [0, 0.5]
	PeriodDays int     // length of a holdout period in days; see PeriodDays
}

// PeriodDays returns the holdout period length for horizon horizonDays:
// the horizon rounded up to whole weeks, at least 7 days.
func PeriodDays(horizonDays int) int {
	if horizonDays <= 7 {
		return 7
	}
	return (horizonDays + 6) / 7 * 7
}

// Validate reports, as a sentence for the user, why h cannot be used.
func (h Holdout) Validate() error {
	if !(h.Share >= 0 && h.Share <= 0.5) {
		return problem.New(problem.Invalid, "The holdout share must be between 0%% and 50%% (got %g%%).", h.Share*100)
	}
	if h.PeriodDays < 1 {
		return problem.New(problem.Invalid, "A holdout period must last at least one day (got %d).", h.PeriodDays)
	}
	if len(h.Salt) < MinSaltBytes {
		return problem.New(problem.Invalid, "The holdout salt must be at least %d bytes long (got %d).", MinSaltBytes, len(h.Salt))
	}
	return nil
}

// Period returns the number of the holdout period holding day d:
// ⌊(d − 2001-01-01) / PeriodDays⌋, so days before the origin fall in
// negative periods. It panics if PeriodDays < 1.
func (h Holdout) Period(d civil.Date) int {
	n := int(d) - int(periodOrigin)
	p := n / h.PeriodDays
	if n%h.PeriodDays < 0 {
		p--
	}
	return p
}

// PeriodStart returns the first day of period p.
func (h Holdout) PeriodStart(p int) civil.Date {
	return periodOrigin + civil.Date(p*h.PeriodDays)
}

// PeriodEnd returns the last day of period p (inclusive).
func (h Holdout) PeriodEnd(p int) civil.Date {
	return h.PeriodStart(p+1) - 1
}

// In reports whether the customer with key customerKey is in the holdout of
// the given period. The hash is HMAC-SHA256 keyed with Salt over the
// message len(key) as 8 bytes big-endian, the key's bytes, then the period
// as a two's-complement int64, 8 bytes big-endian (the length prefix keeps
// every (key, period) pair a distinct message). The customer is in when the
// first 8 bytes of the digest, read big-endian as an integer x, satisfy
// x / 2^64 < Share, compared exactly. Share ≤ 0 puts nobody in.
func (h Holdout) In(customerKey string, period int) bool {
	return h.Members(period)(customerKey)
}

// Members returns In(·, period) as a function, the form Select takes. It
// reuses one HMAC state across calls, so it is faster than In for many
// customers and not safe for concurrent use.
func (h Holdout) Members(period int) func(customerKey string) bool {
	// x / 2^64 < Share ⟺ x < Share·2^64 ⟺ x < ⌈Share·2^64⌉; scaling by a
	// power of two is exact, so the comparison is exact.
	var limit uint64
	all := h.Share >= 1
	if t := math.Ceil(h.Share * 0x1p64); t > 0 && !all {
		limit = uint64(t)
	}
	mac := hmac.New(sha256.New, h.Salt)
	var msg, sum []byte
	return func(key string) bool {
		if all {
			return true
		}
		msg = binary.BigEndian.AppendUint64(msg[:0], uint64(len(key)))
		msg = append(msg, key...)
		msg = binary.BigEndian.AppendUint64(msg, uint64(int64(period)))
		mac.Reset()
		mac.Write(msg)
		sum = mac.Sum(sum[:0])
		return binary.BigEndian.Uint64(sum) < limit
	}
}
