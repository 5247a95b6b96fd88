package db

import (
	"context"
	"fmt"
	"sort"

	"etchlog/db/logfmt"
)

// VerifyLog checks a site's log the way an auditor's offline verify does,
// from the database as it is now: every leaf's fact encoded again from its
// stored row must match the leaf hash; the leaf hashes must rebuild the root
// of the latest signed checkpoint (signature checked with the service's
// public key) and of saved, a checkpoint the caller kept earlier (optional:
// with it, removed or rewritten history is found even when the database's
// own checkpoints were replaced); every stored fact must be in the log; and
// the derived flags must equal the flags recomputed from the records.
func (s *Store) VerifyLog(ctx context.Context, site string, saved []byte) (Verification, error) {
	out := Verification{At: s.now(), Problems: []string{}}
	v := logfmt.NewVerifier(site, s.LogPublicKey())
	if saved != nil {
		if _, err := v.Checkpoint(saved, "the saved checkpoint"); err != nil {
			out.Problems = v.Problems
			return out, nil
		}
	}
	sum, err := s.export(ctx, s.long, site, false, exportSink{emit: func(kind string, rec any) error {
		switch kind {
		case logfmt.LineCheckpoint:
			_, _ = v.Checkpoint([]byte(rec.(logfmt.ExportCheckpoint).Note), "the latest stored checkpoint")
		case logfmt.LineLeaf:
			v.Leaf(rec.(logfmt.ExportLeaf))
		case logfmt.LineUnlogged:
			v.Unlogged(rec.(logfmt.Unlogged))
		}
		return nil
	}})
	if err != nil {
		return out, fmt.Errorf("db: verify log: %w", err)
	}
	if uint64(sum.CheckpointSize) < v.Leaves {
		v.Problem("%d leaves follow the latest signed checkpoint (size %d): leaves were added behind the sequencer", v.Leaves-uint64(sum.CheckpointSize), sum.CheckpointSize)
	}
	var flagProblems []string
	if err := s.checkFlags(ctx, site, func(f string, a ...any) { flagProblems = append(flagProblems, fmt.Sprintf(f, a...)) }); err != nil {
		return out, fmt.Errorf("db: verify flags: %w", err)
	}
	sort.Strings(flagProblems)
	for _, p := range flagProblems {
		v.Problem("%s", p)
	}
	out.OK = v.Finish()
	out.Leaves, out.CheckpointSize, out.Root = v.Leaves, uint64(sum.CheckpointSize), v.Root()
	out.Problems, out.NotListed = append(out.Problems, v.Problems...), v.Dropped
	return out, nil
}
