package web

import (
	"io"
	"net/http"
	"slices"
	"sync"
	"sync/atomic"
	"testing"
	"time"
)

// benchReaders is how many clients load pages at once in BenchmarkPages.
const benchReaders = 32

// BenchmarkPages measures page latency over loopback with 32 concurrent
// readers: the models page, a published list's page, the lists page and
// the campaign tools' CSV API. Each sub-benchmark sends b.N requests from a
// pool of 32 workers and reports the 50th, 95th and 99th percentile
// latencies in milliseconds. The target is a p95 of at most 50 ms.
//
//	go test ./web -run '^$' -bench BenchmarkPages -benchtime 2000x
func BenchmarkPages(b *testing.B) {
	r := sharedRig(b)
	base := r.url()
	routes := []struct {
		name, path, role string
		bearer           bool
	}{
		{"overview", "/datasets/" + itoa(r.dataset.ID) + "/overview", "viewer", false},
		{"models", "/datasets/" + itoa(r.dataset.ID) + "/models", "analyst", false},
		{"list", "/lists/" + itoa(r.listID), "viewer", false},
		{"lists", "/lists", "analyst", false},
		{"api-csv", "/api/v1/datasets/demo/lists/latest.csv", "", true},
	}
	for _, rt := range routes {
		b.Run(rt.name, func(b *testing.B) {
			client := &http.Client{Transport: &http.Transport{MaxIdleConnsPerHost: benchReaders, MaxConnsPerHost: benchReaders}}
			defer client.CloseIdleConnections()
			get := func() (time.Duration, error) {
				req, err := http.NewRequest(http.MethodGet, base+rt.path, nil)
				if err != nil {
					return 0, err
				}
				if rt.bearer {
					req.Header.Set("Authorization", "Bearer "+r.apiToken)
				} else {
					req.AddCookie(r.cookies[rt.role])
				}
				start := time.Now()
				res, err := client.Do(req)
				if err != nil {
					return 0, err
				}
				_, err = io.Copy(io.Discard, res.Body)
				res.Body.Close()
				took := time.Since(start)
				if err == nil && res.StatusCode != http.StatusOK {
					b.Errorf("GET %s: status %d", rt.path, res.StatusCode)
				}
				return took, err
			}
			// Warm the connections and caches.
			for range benchReaders {
				if _, err := get(); err != nil {
					b.Fatal(err)
				}
			}
			latencies := make([]time.Duration, b.N)
			var next atomic.Int64
			var wg sync.WaitGroup
			b.ResetTimer()
			for range benchReaders {
				wg.Add(1)
				go func() {
					defer wg.Done()
					for {
						i := next.Add(1) - 1
						if i >= int64(b.N) {
							return
						}
						took, err := get()
						if err != nil {
							b.Error(err)
							return
						}
						latencies[i] = took
					}
				}()
			}
			wg.Wait()
			b.StopTimer()
			slices.Sort(latencies)
			at := func(q float64) float64 {
				return float64(latencies[min(len(latencies)-1, int(q*float64(len(latencies))))].Microseconds()) / 1000
			}
			b.ReportMetric(at(0.50), "p50-ms")
			b.ReportMetric(at(0.95), "p95-ms")
			b.ReportMetric(at(0.99), "p99-ms")
		})
	}
}
