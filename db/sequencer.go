package db

import (
	"context"
	"fmt"
	"slices"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/transparency-dev/merkle/compact"

	"etchlog/db/logfmt"
)

// SequencerOptions tune RunSequencer; zero values take the defaults.
type SequencerOptions struct {
	Idle  time.Duration // longest wait between passes when no write is seen (default 20 ms)
	Retry time.Duration // how often a follower tries to become the leader (default 1 s)
	Batch int           // most leaves integrated per site and transaction (default 5000)
	// Pace is the least time between the starts of two passes that writes
	// of this process woke (default 40 ms): while writes keep coming, the
	// leaves committed meanwhile are integrated together, in one
	// transaction under one checkpoint, instead of a pass for each commit
	// competing with the writers. A write after a quiet spell is taken at once.
	Pace time.Duration
	// While an import's parts keep coming (a new one within ImportSettle,
	// default 500 ms), the site's pending parts are left for later, for at
	// most ImportHold (default 1 minute; negative: never) (sequencer_hold.go).
	ImportSettle, ImportHold time.Duration
	Logf                     func(format string, args ...any)
}

func (o *SequencerOptions) defaults() {
	if o.Idle <= 0 {
		o.Idle = 20 * time.Millisecond
	}
	if o.Retry <= 0 {
		o.Retry = time.Second
	}
	if o.Batch <= 0 {
		o.Batch = 5000
	}
	if o.Pace <= 0 {
		o.Pace = 40 * time.Millisecond
	}
	if o.ImportSettle <= 0 {
		o.ImportSettle = 500 * time.Millisecond
	}
	if o.ImportHold == 0 {
		o.ImportHold = time.Minute
	}
	if o.Logf == nil {
		o.Logf = func(string, ...any) {}
	}
}

// sequencerLock is the session advisory lock that makes one process the
// leader; it ends with the leader's connection, so another process takes
// over when the leader dies.
const sequencerLock = "SELECT pg_try_advisory_lock(hashtextextended('etchlog-log-sequencer', 0))"

// RunSequencer integrates committed pending leaves into each site's tree
// until ctx ends. Every etchlog process runs one; exactly one of them, the
// holder of a session advisory lock on its own connection, does the work.
func (s *Store) RunSequencer(ctx context.Context, opt SequencerOptions) error {
	opt.defaults()
	for {
		err := s.leadOnce(ctx, opt)
		if ctx.Err() != nil {
			return ctx.Err()
		}
		if err != nil {
			opt.Logf("log sequencer: %v", err)
		}
		select {
		case <-ctx.Done():
			return ctx.Err()
		case <-time.After(opt.Retry):
		}
	}
}

// leadOnce connects, tries to become the leader and, if it does, sequences
// until ctx ends or the connection fails. Closing the connection releases
// the lock.
func (s *Store) leadOnce(ctx context.Context, opt SequencerOptions) error {
	cfg := s.pool.Config().ConnConfig.Copy()
	// The planner's cost of a large batch had it compile the statements to
	// machine code first (JIT), which took longer than their reads by key.
	cfg.RuntimeParams["jit"] = "off"
	cfg.RuntimeParams["application_name"] = "etchlog sequencer"
	conn, err := pgx.ConnectConfig(ctx, cfg)
	if err != nil {
		return err
	}
	defer conn.Close(context.Background())
	var leader bool
	if err := conn.QueryRow(ctx, sequencerLock).Scan(&leader); err != nil || !leader {
		return err
	}
	opt.Logf("log sequencer: this process leads")
	tick := time.NewTicker(opt.Idle)
	defer tick.Stop()
	var kicked time.Time // when the last pass a write woke started
	holds := importHolds{}
	for {
		for {
			full, err := s.integratePass(ctx, conn, opt, holds)
			if err != nil {
				return err
			}
			if !full {
				break
			}
		}
	wait:
		for {
			select {
			case <-ctx.Done():
				return nil
			case <-s.kick:
				if wait := time.Until(kicked.Add(opt.Pace)); wait > 0 { // writes keep coming: gather them
					select {
					case <-ctx.Done():
						return nil
					case <-time.After(wait):
					}
				}
				kicked = time.Now()
				break wait
			case <-tick.C:
				if time.Since(kicked) >= opt.Pace { // no paced pass is due
					break wait
				}
			}
		}
	}
}

// integratePass integrates one batch for every site with pending leaves and
// reports whether some site had more than a batch waiting.
func (s *Store) integratePass(ctx context.Context, conn *pgx.Conn, opt SequencerOptions, holds importHolds) (bool, error) {
	rows, _ := conn.Query(ctx, `SELECT DISTINCT site FROM log_pending`)
	sites, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		return false, err
	}
	full := false
	for _, site := range sites {
		more, err := s.integrate(ctx, conn, site, opt, holds)
		if err != nil {
			return false, fmt.Errorf("site %q: %w", site, err)
		}
		full = full || more
	}
	return full, nil
}

// pendingLeaf is one row of log_pending.
type pendingLeaf struct {
	Seq      int64
	Kind     string
	Version  int
	RecordID [16]byte
	Revision int
	LeafHash []byte
	Tag      []byte
	Actor    string
	Action   string
	Reason   string
	At       time.Time
	// A pending entry of many leaves (log_many.go): how many it names, the
	// rows it names, in order, and their leaf hashes, 32 bytes each; nil
	// for one leaf.
	Many       bool
	Leaves     int
	RecordIDs  [][16]byte
	LeafHashes []byte
}

// A pass takes four round trips, five when it takes entries of many
// leaves: BEGIN; the site's latest checkpoint and the heads of its pending
// rows (every column but an entry's lists, which a second read fetches for
// the entries taken only); one pipelined batch of every write (leaves,
// nodes, the pending rows' deletion, the coupon_list rows, the
// checkpoint); COMMIT. On a loaded machine every round trip waits for the
// server's turn.

// pendingHeads reads the first $2 pending rows of site $1 in sequence order,
// without the lists of an entry of many leaves: octet_length of a stored
// value reads its size, not the value, so an entry waiting behind the batch
// is neither read nor decoded on every pass.
const pendingHeads = `SELECT seq, kind, version, record_id, revision, leaf_hash, tag, actor, action, reason, at,
	record_ids IS NOT NULL, coalesce(octet_length(leaf_hashes) / 32, 1)
	FROM log_pending WHERE site = $1 ORDER BY seq LIMIT $2`

// integrate moves committed pending leaves of one site into its tree, in
// one transaction with the new nodes and a signed checkpoint: pending rows
// in sequence order while they bring no more than opt.Batch leaves, the
// first always (a pending entry of many may name more), unless an import
// in progress holds them (holds). It reports whether more were waiting
// when it read them.
func (s *Store) integrate(ctx context.Context, conn *pgx.Conn, site string, opt SequencerOptions, holds importHolds) (bool, error) {
	batch := opt.Batch
	key := s.logKey()
	if key == nil {
		return false, ErrNoLogKey
	}
	tx, err := conn.Begin(ctx)
	if err != nil {
		return false, err
	}
	defer tx.Rollback(ctx) //nolint:errcheck // no-op after Commit
	var (
		size   uint64
		rng    *compact.Range
		pend   []pendingLeaf
		leaves int
		more   bool
		// the newest import part among the rows read (0: none)
		newestPart int64
	)
	rb := &pgx.Batch{}
	rb.Queue(latestCheckpoint, site).Query(func(rows pgx.Rows) error {
		var e error
		size, rng, e = latestRange(rows)
		return e
	})
	rb.Queue(pendingHeads, site, batch+1).Query(func(rows pgx.Rows) error {
		var p pendingLeaf
		_, err := pgx.ForEachRow(rows, []any{&p.Seq, &p.Kind, &p.Version, &p.RecordID, &p.Revision, &p.LeafHash, &p.Tag,
			&p.Actor, &p.Action, &p.Reason, &p.At, &p.Many, &p.Leaves}, func() error {
			if importPart(p) {
				newestPart = p.Seq
			}
			if more || (len(pend) > 0 && leaves+p.Leaves > batch) {
				more = true // left for the next transaction
				return nil
			}
			pend = append(pend, p)
			leaves += p.Leaves
			return nil
		})
		return err
	})
	if err := tx.SendBatch(ctx, rb).Close(); err != nil {
		return false, err
	}
	if holds.holding(site, len(pend) > 0 && importPart(pend[0]), newestPart, time.Now(), opt) || len(pend) == 0 {
		return false, nil
	}
	if err := readManyLists(ctx, tx, site, pend); err != nil {
		return false, err
	}
	// Rows stored before the log existed enter it without a hash, once: only
	// below the migration's horizon and above every sequence already logged.
	var horizon, lastSeq int64
	if slices.ContainsFunc(pend, func(p pendingLeaf) bool { return p.LeafHash == nil }) {
		if err := tx.QueryRow(ctx, `SELECT (SELECT coalesce(max(horizon), 0) FROM log_backfill),
			(SELECT coalesce(max(pending_seq), 0) FROM log_leaves WHERE site = $1)`, site).Scan(&horizon, &lastSeq); err != nil {
			return false, err
		}
	}
	now := s.now()
	var out leafRows
	var nodes nodeRows
	var rejected [][]any
	var listed listedLeaves
	seqs := make([]int64, len(pend))
	visit := func(id compact.NodeID, hash []byte) { nodes.add(id, hash) }
	for i, p := range pend {
		seqs[i] = p.Seq
		if p.Many { // a pending entry of many leaves, each row its own leaf
			if why := manyRefusal(s, site, p); why != "" {
				rejected = append(rejected, []any{p.Seq, site, p.Kind, p.RecordID, p.Revision, why, now})
				continue
			}
			for i, id := range p.RecordIDs {
				h := p.LeafHashes[32*i : 32*i+32]
				out.add(p, id, h)
				listed.add(p.Kind, id)
				if err := rng.Append(h, visit); err != nil {
					return false, err
				}
			}
			continue
		}
		why := ""
		switch {
		case p.LeafHash == nil && p.Seq <= horizon && p.Seq > lastSeq: // stored before the log existed
			if p.LeafHash, err = encodeStored(ctx, tx, p.Kind, p.Version, site, p.RecordID, p.Revision); err != nil {
				why = err.Error()
			}
		case p.LeafHash == nil:
			why = "pending leaf without a hash"
		case !key.TagOK(site, p.LeafHash, p.Tag):
			why = "pending leaf without a valid tag: not written by the service"
		}
		if why != "" {
			rejected = append(rejected, []any{p.Seq, site, p.Kind, p.RecordID, p.Revision, why, now})
			continue
		}
		out.add(p, p.RecordID, p.LeafHash)
		listed.add(p.Kind, p.RecordID)
		if err := rng.Append(p.LeafHash, visit); err != nil {
			return false, err
		}
	}
	if len(rejected) > 0 {
		if _, err := tx.CopyFrom(ctx, pgx.Identifier{"log_rejected"}, []string{"seq", "site", "kind", "record_id", "revision", "why", "rejected_at"},
			pgx.CopyFromRows(rejected)); err != nil {
			return false, fmt.Errorf("log_rejected: %w", err)
		}
	}
	// Every write of the pass in one round trip, in this order (each
	// statement sees the ones before it: the coupon_list rows are derived
	// from the leaves just written).
	wb := &pgx.Batch{}
	if len(out.ids) > 0 {
		wb.Queue(insertLeaves, site, int64(size), now, out.kinds, out.versions, out.ids, out.revisions, out.hashes,
			out.actors, out.actions, out.reasons, out.at, out.seqs)
		wb.Queue(insertNodes, site, nodes.levels, nodes.indexes, nodes.hashes)
	}
	wb.Queue(`DELETE FROM log_pending WHERE site = $1 AND seq = ANY($2)`, site, seqs)
	listed.queue(wb, site, &out)
	queueSectionList(wb, site, listed.sections)
	queueProductionList(wb, site, pend, &out, size)
	queueSignOffList(wb, site, &out, size)
	queueQualificationList(wb, site, &out)
	queueProcedureList(wb, site, &out)
	if len(out.ids) > 0 {
		root, err := rng.GetRootHash(nil)
		if err != nil {
			return false, err
		}
		note, err := logfmt.SignCheckpoint(key, site, rng.End(), root)
		if err != nil {
			return false, err
		}
		wb.Queue(`INSERT INTO log_checkpoints (site, size, root, range_hashes, note, created_at)
			VALUES ($1, $2, $3, $4, $5, $6)`, site, int64(rng.End()), root, rng.Hashes(), note, now)
	}
	if err := tx.SendBatch(ctx, wb).Close(); err != nil {
		return false, err
	}
	return more, tx.Commit(ctx)
}

// readManyLists reads the lists (record_ids, leaf_hashes) of the entries of
// many leaves among pend, in one statement when there are any.
func readManyLists(ctx context.Context, tx pgx.Tx, site string, pend []pendingLeaf) error {
	at := map[int64]int{}
	var seqs []int64
	for i, p := range pend {
		if p.Many {
			at[p.Seq] = i
			seqs = append(seqs, p.Seq)
		}
	}
	if len(seqs) == 0 {
		return nil
	}
	rows, _ := tx.Query(ctx, `SELECT seq, record_ids, leaf_hashes FROM log_pending WHERE site = $1 AND seq = ANY($2)`, site, seqs)
	var seq int64
	var ids [][16]byte
	var hashes []byte
	n := 0
	_, err := pgx.ForEachRow(rows, []any{&seq, &ids, &hashes}, func() error {
		p := &pend[at[seq]]
		p.RecordIDs, p.LeafHashes = ids, hashes
		ids, hashes = nil, nil
		n++
		return nil
	})
	if err == nil && n != len(seqs) {
		err = fmt.Errorf("read the lists of %d of %d pending entries", n, len(seqs))
	}
	return err
}

// leafRows are the leaves of a pass, column by column, as insertLeaves
// takes them.
type leafRows struct {
	kinds, actors, actions, reasons []string
	versions, revisions             []int32
	ids                             [][16]byte // not uuid.UUID: pgx encodes those through their text (driver.Valuer), at a cost
	hashes                          [][]byte
	at                              []time.Time
	seqs                            []int64
}

// add appends the leaf of record id (hash h) that pending row p names.
func (l *leafRows) add(p pendingLeaf, id [16]byte, h []byte) {
	l.kinds = append(l.kinds, p.Kind)
	l.versions = append(l.versions, int32(p.Version))
	l.ids = append(l.ids, id)
	l.revisions = append(l.revisions, int32(p.Revision))
	l.hashes = append(l.hashes, h)
	l.actors = append(l.actors, p.Actor)
	l.actions = append(l.actions, p.Action)
	l.reasons = append(l.reasons, p.Reason)
	l.at = append(l.at, p.At)
	l.seqs = append(l.seqs, p.Seq)
}

// insertLeaves writes a pass's leaves at site $1 from index $2 on, in the
// arrays' order, integrated at $3.
const insertLeaves = `INSERT INTO log_leaves (site, leaf_index, kind, version, record_id, revision, leaf_hash,
		actor, action, reason, at, integrated_at, pending_seq)
	SELECT $1, $2 + l.n - 1, l.kind, l.version, l.record_id, l.revision, l.leaf_hash, l.actor, l.action, l.reason, l.at, $3, l.seq
	FROM unnest($4::text[], $5::int[], $6::uuid[], $7::int[], $8::bytea[], $9::text[], $10::text[], $11::text[],
		$12::timestamptz[], $13::bigint[]) WITH ORDINALITY
		AS l(kind, version, record_id, revision, leaf_hash, actor, action, reason, at, seq, n)`

// nodeRows are the tree nodes above the leaves a pass completes, column
// by column. Level 0 is not stored: a leaf's hash is its log_leaves row's
// (migration 000047), and proofs read it there (proofHashes).
type nodeRows struct {
	levels  []int16
	indexes []int64
	hashes  [][]byte
}

func (n *nodeRows) add(id compact.NodeID, hash []byte) {
	if id.Level == 0 {
		return
	}
	n.levels = append(n.levels, int16(id.Level))
	n.indexes = append(n.indexes, int64(id.Index))
	n.hashes = append(n.hashes, hash)
}

// insertNodes writes a pass's tree nodes at site $1.
const insertNodes = `INSERT INTO log_nodes (site, tree_level, tree_index, hash)
	SELECT $1, n.level, n.index, n.hash FROM unnest($2::smallint[], $3::bigint[], $4::bytea[]) AS n(level, index, hash)`

var rangeFactory = &compact.RangeFactory{Hash: logfmt.HashChildren}

// latestCheckpoint reads the size and compact range of site $1's latest
// checkpoint (no row: an empty log).
const latestCheckpoint = `SELECT size, range_hashes FROM log_checkpoints WHERE site = $1 ORDER BY size DESC LIMIT 1`

// latestRange reads the compact range of a site's latest checkpoint from
// the rows of latestCheckpoint.
func latestRange(rows pgx.Rows) (uint64, *compact.Range, error) {
	var size int64
	var hashes [][]byte
	n, err := pgx.ForEachRow(rows, []any{&size, &hashes}, func() error { return nil })
	if err != nil {
		return 0, nil, err
	}
	if n.RowsAffected() == 0 {
		return 0, rangeFactory.NewEmptyRange(0), nil
	}
	rng, err := rangeFactory.NewRange(0, uint64(size), hashes)
	return uint64(size), rng, err
}

// encodeStored encodes a stored row as a fact and returns its leaf hash.
func encodeStored(ctx context.Context, q querier, kind string, version int, site string, id [16]byte, rev int) ([]byte, error) {
	k, err := leafKind(kind, version)
	if err != nil {
		return nil, err
	}
	rows, _ := q.Query(ctx, k.selectRow(), site, id, rev)
	defer rows.Close()
	if !rows.Next() {
		if err := rows.Err(); err != nil {
			return nil, err
		}
		return nil, fmt.Errorf("%s row is missing", kind)
	}
	f, err := factOf(k, rows)
	if err != nil {
		return nil, err
	}
	return f.LeafHash(), nil
}
