// Package demo generates an invented repeat-purchase business, "Larkspur
// Refills", so that ebb can be shown and tried without real data.
//
// The data is fully synthetic and deterministic from Options.Seed: the same
// seed always gives byte-identical CSV files. The modelling assumptions are
// listed in README.md next to this file. Invented data is for the demo only.
package demo

import (
	"cmp"
	"math"
	"math/rand/v2"
	"slices"
	"time"
)

// Options controls the generator. Zero values mean defaults.
type Options struct {
	Seed      uint64 // default 1 when 0
	Customers int    // default 4000
}

// Default option values used when the corresponding field is zero.
const (
	DefaultSeed      uint64 = 1
	DefaultCustomers        = 4000
)

// Customer is one invented customer with the attributes fixed at acquisition
// and the true behavioural parameters that generated their orders.
type Customer struct {
	Key         string    // e.g. "C00017" -- stable, unique, in order of acquisition
	Email       string    // on example.com only (RFC 2606 reserved), e.g. "c00017@example.com"
	Signup      time.Time // date (UTC midnight) = first order day
	Contactable bool      // a few percent false (opted out of email)
	Channel     string    // attribute fixed at acquisition: "search","social","referral","market_stall"
	FirstLine   string    // attribute fixed at acquisition: "laundry","kitchen","bodycare"
	Region      string    // attribute fixed at acquisition: "north","south","east","west"

	// Truth, for tests of later models:
	RatePerYear float64   // the customer's true order-day rate while active (orders per year, before seasonality)
	DropoutDay  time.Time // first day the customer is no longer active; zero if still active at End
	// Quiet is whether the customer carries the quiet-leaving clock (see
	// quietShare): hidden state, drawn at sign-up.
	Quiet bool
	// LeftAfterOrder is whether the customer left by the dropout coin
	// tossed after their last order day (DropoutDay is the day after it),
	// rather than by the quiet clock.
	LeftAfterOrder bool
}

// Order is one order. A customer may have two orders on the same day.
type Order struct {
	CustomerKey string
	Date        time.Time // UTC midnight
	Amount      float64   // currency units, 2 decimals, > 0
	ID          string    // unique order reference, e.g. "LR-0000123", assigned in date order
}

// Business is the complete invented data set.
type Business struct {
	Start, End time.Time // first possible order day and the last day of data (data_through), UTC midnight
	Customers  []Customer
	Orders     []Order // sorted by Date then ID
}

// startDay and endDay bound the invented history: three years, fixed so
// that output never depends on the wall clock.
var (
	startDay = time.Date(2023, time.November, 1, 0, 0, 0, 0, time.UTC)
	endDay   = time.Date(2026, time.October, 31, 0, 0, 0, 0, time.UTC)
)

// pcgStream is the second PCG word; it spells "Larkspur" so that the demo
// stream differs from any other generator seeded with the same number.
const pcgStream = 0x4c61726b73707572

const daysPerYear = 365.25

// Acquisition model.
const (
	// acqGrowthPerYear is the yearly growth factor of the acquisition rate:
	// the shop is growing, so the last year brings about 1.7x the first.
	acqGrowthPerYear = 1.3
)

// acqSeason is the relative acquisition intensity by month (index 0 = January):
// more sign-ups before the holidays (Nov/Dec) and at spring cleaning (Mar-May),
// fewer in high summer.
var acqSeason = [12]float64{1.0, 0.95, 1.2, 1.25, 1.15, 0.95, 0.85, 0.8, 1.0, 1.0, 1.3, 1.45}

// orderSeason multiplies a customer's order rate by month (index 0 =
// January). It averages exactly 1 over the year so RatePerYear stays the
// yearly rate: a December bump (gifts, guests) and an August dip (holidays).
var orderSeason = [12]float64{0.95, 0.95, 1.0, 1.0, 1.0, 0.95, 0.9, 0.75, 1.0, 1.05, 1.1, 1.35}

// Order-rate model: RatePerYear ~ Gamma(rateShape, rateScale) times the
// attribute factors. The mean is about 6.6 orders a year; the median customer
// orders about every 73 days, the middle half every 40 to 150 days, about two
// thirds between every 20 and every 120 days, and the right tail holds a few
// very frequent buyers (more than every 20 days, about 4%).
const (
	rateShape   = 1.5
	rateScale   = 4.5  // orders per year
	minRate     = 0.5  // orders per year; keeps gaps below two years
	maxRate     = 60   // orders per year; refills more often than every six days are implausible
	rateMaxSeas = 1.35 // the largest orderSeason value, the ceiling for thinning
)

// Dropout model: after every order day the customer leaves for good with
// probability p ~ Beta(dropA, dropB) (mean 0.12) times a channel factor.
// In addition a share quietShare goes quiet at an exponential time (mean
// quietMeanDays) after sign-up regardless of ordering (moved away, switched
// shop, lost the containers). Together with the late sign-ups who have not
// had time to reorder, this makes about 29% of customers single-order.
const (
	dropA         = 1.2
	dropB         = 8.8
	maxDrop       = 0.9
	quietShare    = 0.18
	quietMeanDays = 90.0
)

// Basket model: each customer has a mean basket ~ LogNormal(ln basketMedian,
// basketSigma); each order is that times LogNormal noise with mean 1.
const (
	basketMedian = 33.0 // currency units
	basketSigma  = 0.25
	orderSigma   = 0.30
	minAmount    = 1.00 // currency units; no free orders

	// repeatShare of order days get a second, smaller order the same day
	// (a forgotten item), of about repeatFactor times the usual basket.
	repeatShare  = 0.03
	repeatFactor = 0.35

	// nonContactableShare of customers opted out of email.
	nonContactableShare = 0.04
)

// weighted is a categorical attribute value with its acquisition share and
// its effect on behaviour (multipliers on the order rate and dropout p).
type weighted struct {
	value      string
	share      float64
	rateFactor float64
	dropFactor float64
}

// Channels differ in loyalty: referred customers stay longer, social-media
// customers churn faster, market-stall customers buy less often.
var channels = []weighted{
	{"search", 0.40, 1.0, 1.0},
	{"social", 0.25, 1.0, 1.3},
	{"referral", 0.20, 1.0, 0.75},
	{"market_stall", 0.15, 0.8, 0.9},
}

// First product line: laundry liquid runs out faster than body care.
var firstLines = []weighted{
	{"laundry", 0.45, 1.1, 1.0},
	{"kitchen", 0.30, 1.0, 1.0},
	{"bodycare", 0.25, 0.85, 1.0},
}

// Region has no effect on behaviour on purpose: a null attribute that a
// model should not find meaningful.
var regions = []weighted{
	{"north", 0.22, 1, 1},
	{"south", 0.30, 1, 1},
	{"east", 0.20, 1, 1},
	{"west", 0.28, 1, 1},
}

// Generate builds the invented business. It is deterministic from opt.Seed
// and never reads the clock.
func Generate(opt Options) Business {
	if opt.Seed == 0 {
		opt.Seed = DefaultSeed
	}
	if opt.Customers <= 0 {
		opt.Customers = DefaultCustomers
	}
	rng := rand.New(rand.NewPCG(opt.Seed, pcgStream))
	nDays := int(endDay.Sub(startDay).Hours()/24) + 1

	// Month of each day index, for the seasonal lookups.
	month := make([]int, nDays)
	for d := range month {
		month[d] = int(dayDate(d).Month()) - 1
	}

	signups := acquisitionDays(rng, opt.Customers, month)

	type dayOrder struct {
		day      int
		cust     int // customer index, for a stable tie-break
		seq      int // order within the customer
		amount   float64
		customer string
	}
	var raw []dayOrder
	customers := make([]Customer, len(signups))
	for i, signup := range signups {
		c := &customers[i]
		c.Key = customerKey(i)
		c.Email = emailFor(c.Key)
		c.Signup = dayDate(signup)
		c.Contactable = rng.Float64() >= nonContactableShare
		ch := pick(rng, channels)
		fl := pick(rng, firstLines)
		rg := pick(rng, regions)
		c.Channel, c.FirstLine, c.Region = ch.value, fl.value, rg.value

		c.RatePerYear = clamp(gamma(rng, rateShape)*rateScale*ch.rateFactor*fl.rateFactor, minRate, maxRate)
		p := math.Min(beta(rng, dropA, dropB)*ch.dropFactor, maxDrop)
		quietDay := math.MaxInt
		if rng.Float64() < quietShare {
			c.Quiet = true
			// At least one day after sign-up: the first order always happens.
			quietDay = signup + 1 + int(rng.ExpFloat64()*quietMeanDays)
		}
		basket := basketMedian * math.Exp(rng.NormFloat64()*basketSigma)

		// Order days: a Poisson process at RatePerYear x season, simulated
		// by thinning a process at the maximal seasonal rate. The first
		// order happens at a random time of the sign-up day.
		ratePerDay := c.RatePerYear / daysPerYear
		t := float64(signup) + rng.Float64()
		day := signup
		dropout := 0 // day index of dropout; 0 means none (signup >= 0 so 0 is never a dropout day)
		seq := 0
		for {
			amount := orderAmount(rng, basket)
			raw = append(raw, dayOrder{day, i, seq, amount, c.Key})
			seq++
			if rng.Float64() < repeatShare {
				raw = append(raw, dayOrder{day, i, seq, orderAmount(rng, basket*repeatFactor), c.Key})
				seq++
			}
			// The dropout coin is tossed after every order day.
			if rng.Float64() < p {
				dropout = day + 1
				break
			}
			next := day
			for next == day {
				t += rng.ExpFloat64() / (ratePerDay * rateMaxSeas)
				if t >= float64(nDays) {
					next = nDays
					break
				}
				d := int(t)
				if d > day && rng.Float64() < orderSeason[month[d]]/rateMaxSeas {
					next = d
				}
			}
			if next >= quietDay {
				dropout = quietDay
				break
			}
			if next >= nDays {
				break
			}
			day = next
		}
		if dropout > 0 && dropout < nDays {
			c.DropoutDay = dayDate(dropout)
			c.LeftAfterOrder = dropout != quietDay
		}
	}

	// Order IDs follow date order; within a day, acquisition order then the
	// customer's own sequence, so IDs are stable for a given seed.
	slices.SortFunc(raw, func(a, b dayOrder) int {
		return cmp.Or(cmp.Compare(a.day, b.day), cmp.Compare(a.cust, b.cust), cmp.Compare(a.seq, b.seq))
	})
	orders := make([]Order, len(raw))
	for i, r := range raw {
		orders[i] = Order{
			CustomerKey: r.customer,
			Date:        dayDate(r.day),
			Amount:      r.amount,
			ID:          orderID(i + 1),
		}
	}
	return Business{Start: startDay, End: endDay, Customers: customers, Orders: orders}
}

// acquisitionDays draws n first-order day indexes with growth and
// seasonality, sorted ascending so that customer keys follow acquisition.
func acquisitionDays(rng *rand.Rand, n int, month []int) []int {
	cdf := make([]float64, len(month))
	total := 0.0
	for d := range month {
		years := float64(d) / daysPerYear
		total += math.Pow(acqGrowthPerYear, years) * acqSeason[month[d]]
		cdf[d] = total
	}
	days := make([]int, n)
	for i := range days {
		u := rng.Float64() * total
		d, _ := slices.BinarySearch(cdf, u)
		days[i] = min(d, len(cdf)-1)
	}
	slices.Sort(days)
	return days
}

// orderAmount draws one order amount around mean, rounded to cents and never
// below minAmount.
func orderAmount(rng *rand.Rand, mean float64) float64 {
	// Subtracting sigma^2/2 makes the noise factor average 1.
	x := mean * math.Exp(rng.NormFloat64()*orderSigma-orderSigma*orderSigma/2)
	return math.Max(math.Round(x*100)/100, minAmount)
}

// pick draws one value by share. Shares sum to 1; the last value absorbs
// any rounding.
func pick(rng *rand.Rand, ws []weighted) weighted {
	u := rng.Float64()
	for _, w := range ws {
		if u < w.share {
			return w
		}
		u -= w.share
	}
	return ws[len(ws)-1]
}

// gamma draws from Gamma(shape, 1) by Marsaglia and Tsang's method
// (math/rand/v2 has no gamma sampler).
func gamma(rng *rand.Rand, shape float64) float64 {
	if shape < 1 {
		// Boost: Gamma(a) = Gamma(a+1) * U^(1/a).
		return gamma(rng, shape+1) * math.Pow(rng.Float64(), 1/shape)
	}
	d := shape - 1.0/3
	c := 1 / math.Sqrt(9*d)
	for {
		x := rng.NormFloat64()
		v := 1 + c*x
		if v <= 0 {
			continue
		}
		v = v * v * v
		u := rng.Float64()
		if u < 1-0.0331*x*x*x*x || math.Log(u) < 0.5*x*x+d*(1-v+math.Log(v)) {
			return d * v
		}
	}
}

// beta draws from Beta(a, b) as a ratio of gammas.
func beta(rng *rand.Rand, a, b float64) float64 {
	x := gamma(rng, a)
	y := gamma(rng, b)
	return x / (x + y)
}

func clamp(x, lo, hi float64) float64 { return math.Max(lo, math.Min(x, hi)) }

// dayDate converts a day index (0 = Start) to a UTC midnight date.
func dayDate(d int) time.Time { return startDay.AddDate(0, 0, d) }
