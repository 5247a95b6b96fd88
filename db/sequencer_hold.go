package db

import "time"

// An import commits its parts one after another, each with a pending entry
// of many leaves for its coupons and one for its sections. Integrating a
// part while the next ones are written makes the sequencer compete with
// the import for the same cores, and a part's leaves, tree nodes and list
// rows cost the database more than the part's own rows. So while a site's
// parts keep coming, the sequencer holds them back: it passes over a site
// whose oldest pending row is an import's part as long as a new part came
// within ImportSettle and the hold has lasted less than ImportHold, and
// then integrates the backlog in full batches (the hold does not begin
// again until the site's pending import parts are all integrated, so a
// longer import is integrated while it runs). The records are stored and
// answered at once; they reach the log and the lists that much later, and
// the site's other writes made meanwhile wait behind the parts.

// importHold is what the sequencer knows of a site's import in progress.
type importHold struct {
	since  time.Time // when the hold began
	last   time.Time // when the newest part was first seen
	newest int64     // the newest part's sequence number
}

// importHolds are the holds of the sites, kept by the leading sequencer.
type importHolds map[string]*importHold

// importPart reports whether a pending row is a part of an import: an entry
// of many leaves of coupons or of sections (only an import writes those).
func importPart(p pendingLeaf) bool {
	return p.Many && (p.Kind == coupons.entity || p.Kind == measurements.entity)
}

// holding reports whether a pass at site leaves its pending rows for later:
// the first of them is an import's part (head), newest is the newest part
// among the rows read (0: none), now the pass's time.
func (h importHolds) holding(site string, head bool, newest int64, now time.Time, opt SequencerOptions) bool {
	if !head || opt.ImportHold < 0 {
		delete(h, site)
		return false
	}
	st, ok := h[site]
	if !ok {
		st = &importHold{since: now, last: now, newest: newest}
		h[site] = st
	}
	if newest > st.newest {
		st.newest, st.last = newest, now
	}
	return now.Sub(st.last) < opt.ImportSettle && now.Sub(st.since) < opt.ImportHold
}
