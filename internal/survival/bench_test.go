package survival

import (
	"math/rand/v2"
	"testing"
)

// benchEpisodes returns n episodes like gaps between order days: lengths
// in whole days, roughly exponential with a 45-day mean and capped at 3
// years, 80% closed by a reorder (the event), the rest open (censored).
func benchEpisodes(n int) ([]int32, []bool) {
	rng := rand.New(rand.NewPCG(3, 5))
	days := make([]int32, n)
	events := make([]bool, n)
	for i := range days {
		days[i] = int32(min(rng.ExpFloat64()*45, 3*365))
		events[i] = rng.Float64() < 0.8
	}
	return days, events
}

// BenchmarkKaplanMeier builds the curve of 1M whole-day episodes (and reads
// its median and table) through each constructor: KaplanMeierDays and
// Builder count per day, O(n + longest); KaplanMeier sorts float64 times,
// O(n log n).
func BenchmarkKaplanMeier(b *testing.B) {
	const n = 1_000_000
	days, events := benchEpisodes(n)
	times := make([]float64, n)
	for i, d := range days {
		times[i] = float64(d)
	}
	use := func(b *testing.B, c *Curve) {
		if _, ok := c.Median(); !ok || c.N() != n || len(c.Rows()) == 0 {
			b.Fatalf("unexpected curve: N() = %d", c.N())
		}
	}
	b.Run("KaplanMeierDays", func(b *testing.B) {
		for range b.N {
			c, err := KaplanMeierDays(days, events)
			if err != nil {
				b.Fatal(err)
			}
			use(b, c)
		}
		b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "episodes/s")
	})
	b.Run("Builder", func(b *testing.B) {
		var bl Builder
		for range b.N {
			bl.Reset()
			for i, d := range days {
				if err := bl.Add(int(d), events[i]); err != nil {
					b.Fatal(err)
				}
			}
			use(b, bl.Curve())
		}
		b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "episodes/s")
	})
	b.Run("KaplanMeier/float64", func(b *testing.B) {
		for range b.N {
			c, err := KaplanMeier(times, events)
			if err != nil {
				b.Fatal(err)
			}
			use(b, c)
		}
		b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "episodes/s")
	})
}
