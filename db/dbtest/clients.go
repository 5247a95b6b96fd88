package dbtest

import (
	"sync"
	"testing"
	"time"
)

// Clients runs call n times from k goroutines, as k clients would, and
// returns the wall time and the first error (the benchmarks' side-by-side
// runs at a fixed concurrency).
func Clients(k, n int, call func() error) (time.Duration, error) {
	var wg sync.WaitGroup
	var once sync.Once
	var first error
	work := make(chan struct{}, n)
	for range n {
		work <- struct{}{}
	}
	close(work)
	t0 := time.Now()
	for range k {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for range work {
				if err := call(); err != nil {
					once.Do(func() { first = err })
				}
			}
		}()
	}
	wg.Wait()
	return time.Since(t0), first
}

// TimeClients is Clients for a benchmark: it fails tb on the first error and
// returns the wall time.
func TimeClients(tb testing.TB, k, n int, call func() error) time.Duration {
	tb.Helper()
	d, err := Clients(k, n, call)
	if err != nil {
		tb.Fatal(err)
	}
	return d
}
