package db

import (
	"testing"
	"time"
)

// TestImportHold walks the sequencer's hold of an import's parts through a
// timeline (the rule is the service's own; no outside source): held while
// parts keep coming within the settle time, released when they stop,
// released for good once the hold has lasted its longest, and only
// for a site whose oldest pending row is an import's part.
func TestImportHold(t *testing.T) {
	opt := SequencerOptions{}
	opt.defaults()
	t0 := time.Date(2026, 12, 2, 9, 0, 0, 0, time.UTC)
	at := func(d time.Duration) time.Time { return t0.Add(d) }
	h := importHolds{}
	for _, step := range []struct {
		name   string
		head   bool
		newest int64
		now    time.Time
		want   bool
	}{
		{"a single write at the head is taken", false, 0, at(0), false},
		{"the first part is held", true, 10, at(0), true},
		{"no new part yet, within the settle time", true, 10, at(opt.ImportSettle - time.Millisecond), true},
		{"a new part keeps the hold", true, 12, at(opt.ImportSettle), true},
		{"parts stopped: released", true, 12, at(2 * opt.ImportSettle), false},
		{"a part after the release holds again", true, 14, at(2*opt.ImportSettle + time.Millisecond), true},
		{"parts keep coming up to the longest hold", true, 16, at(opt.ImportHold - time.Millisecond), true},
		{"then the backlog is integrated while parts come", true, 18, at(opt.ImportHold), false},
		{"and stays so while the parts pend", true, 20, at(opt.ImportHold + time.Second), false},
		{"the parts integrated: the hold ends", false, 0, at(opt.ImportHold + 2*time.Second), false},
		{"a new import is held again", true, 30, at(opt.ImportHold + 3*time.Second), true},
	} {
		if got := h.holding("s", step.head, step.newest, step.now, opt); got != step.want {
			t.Errorf("%s: holding = %v, want %v", step.name, got, step.want)
		}
	}
	if h.holding("other", true, 1, at(0), SequencerOptions{ImportSettle: time.Second, ImportHold: -1}) {
		t.Error("a negative ImportHold held a part")
	}
}
