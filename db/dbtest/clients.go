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

// TimeRounds runs a and b side by side for a benchmark, n calls each from
// k clients, taking turns in rounds of round calls so that a change of the
// machine's load falls on both; it fails tb on the first error and returns
// each side's wall time.
func TimeRounds(tb testing.TB, k, n, round int, a, b func() error) (inA, inB time.Duration) {
	tb.Helper()
	for done := 0; done < n; done += round {
		for _, side := range []struct {
			call func() error
			took *time.Duration
		}{{a, &inA}, {b, &inB}} {
			d, err := Clients(k, min(round, n-done), side.call)
			if err != nil {
				tb.Fatal(err)
			}
			*side.took += d
		}
	}
	return inA, inB
}

// WarmCalls is how many untimed calls per client Warm makes of each side:
// past the five custom plans PostgreSQL makes of a prepared statement
// before it may switch to the generic one.
const WarmCalls = 8

// Warm calls each of calls WarmCalls times from each of k goroutines,
// untimed and one side after the other, before a side-by-side run: a new
// pool connection's first executions of a statement pay for its catalog
// caches and its first plans (about 5 ms each for a list page's statement,
// against 0.1-1 ms for the page), and a timed run of a few hundred calls
// over 8 connections measured mostly that. Both sides are warmed alike, so
// the timed run measures the steady state of a service whose connections
// live long.
func Warm(k int, calls ...func() error) error {
	for _, call := range calls {
		if _, err := Clients(k, k*WarmCalls, call); err != nil {
			return err
		}
	}
	return nil
}
