package db

import (
	"context"
	"errors"
	"fmt"
	"slices"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"
	"github.com/transparency-dev/merkle/compact"

	"etchlog/db/logfmt"
)

// SequencerOptions tune RunSequencer; zero values take the defaults.
type SequencerOptions struct {
	Idle  time.Duration // longest wait between passes when no write is seen (default 20 ms)
	Retry time.Duration // how often a follower tries to become the leader (default 1 s)
	Batch int           // most leaves integrated per site and transaction (default 2000)
	// Pace is the least time between the starts of two passes that writes
	// of this process woke (default 40 ms): while writes keep coming, the
	// leaves committed meanwhile are integrated together, in one
	// transaction under one checkpoint, instead of a pass for each commit
	// competing with the writers. A write after a quiet spell is taken at once.
	Pace time.Duration
	Logf func(format string, args ...any)
}

func (o *SequencerOptions) defaults() {
	if o.Idle <= 0 {
		o.Idle = 20 * time.Millisecond
	}
	if o.Retry <= 0 {
		o.Retry = time.Second
	}
	if o.Batch <= 0 {
		o.Batch = 2000
	}
	if o.Pace <= 0 {
		o.Pace = 40 * time.Millisecond
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
	conn, err := pgx.ConnectConfig(ctx, s.pool.Config().ConnConfig.Copy())
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
	for {
		for {
			full, err := s.integratePass(ctx, conn, opt.Batch)
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
func (s *Store) integratePass(ctx context.Context, conn *pgx.Conn, batch int) (bool, error) {
	rows, _ := conn.Query(ctx, `SELECT DISTINCT site FROM log_pending`)
	sites, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		return false, err
	}
	full := false
	for _, site := range sites {
		more, err := s.integrate(ctx, conn, site, batch)
		if err != nil {
			return false, fmt.Errorf("site %q: %w", site, err)
		}
		full = full || more
	}
	return full, nil
}

// pendingLeaf is one row of log_pending.
type pendingLeaf struct {
	Seq      int64    `db:"seq"`
	Kind     string   `db:"kind"`
	Version  int      `db:"version"`
	RecordID [16]byte `db:"record_id"`
	Revision int      `db:"revision"`
	LeafHash []byte   `db:"leaf_hash"`
	Tag      []byte   `db:"tag"`
	// A pending entry of many leaves (log_many.go): the rows it names, in
	// order, and their leaf hashes, 32 bytes each; nil for one leaf.
	RecordIDs  [][16]byte `db:"record_ids"`
	LeafHashes []byte     `db:"leaf_hashes"`
	Actor      string     `db:"actor"`
	Action     string     `db:"action"`
	Reason     string     `db:"reason"`
	At         time.Time  `db:"at"`
}

// integrate moves committed pending leaves of one site into its tree, in
// one transaction with the new nodes and a signed checkpoint: up to batch
// pending rows, and no more than batch leaves unless the first row alone (a
// pending entry of many) names more. It reports whether more were waiting.
func (s *Store) integrate(ctx context.Context, conn *pgx.Conn, site string, batch int) (bool, error) {
	key := s.logKey()
	if key == nil {
		return false, ErrNoLogKey
	}
	tx, err := conn.Begin(ctx)
	if err != nil {
		return false, err
	}
	defer tx.Rollback(ctx) //nolint:errcheck // no-op after Commit
	size, rng, err := latestRange(ctx, tx, site)
	if err != nil {
		return false, err
	}
	rows, _ := tx.Query(ctx, `SELECT seq, kind, version, record_id, revision, leaf_hash, tag, actor, action, reason, at,
		record_ids, leaf_hashes
		FROM log_pending WHERE site = $1 ORDER BY seq LIMIT $2`, site, batch)
	pend, err := pgx.CollectRows(rows, pgx.RowToStructByName[pendingLeaf])
	if err != nil || len(pend) == 0 {
		return false, err
	}
	var waiting bool // rows past those read
	if err := tx.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM log_pending WHERE site = $1 AND seq > $2)`, site, pend[len(pend)-1].Seq).Scan(&waiting); err != nil {
		return false, err
	}
	more := waiting
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
	var leaves, nodes, rejected [][]any
	var listed listedLeaves
	seqs := make([]int64, 0, len(pend))
	visit := func(id compact.NodeID, hash []byte) {
		nodes = append(nodes, []any{site, int16(id.Level), int64(id.Index), hash})
	}
	for _, p := range pend {
		if p.RecordIDs != nil { // a pending entry of many leaves, each row its own leaf
			if len(leaves) > 0 && len(leaves)+len(p.RecordIDs) > batch {
				more = true // left for the next transaction
				break
			}
			seqs = append(seqs, p.Seq)
			if why := manyRefusal(s, site, p); why != "" {
				rejected = append(rejected, []any{p.Seq, site, p.Kind, p.RecordID, p.Revision, why, now})
				continue
			}
			for i, id := range p.RecordIDs {
				h := p.LeafHashes[32*i : 32*i+32]
				idx := size + uint64(len(leaves))
				leaves = append(leaves, []any{site, int64(idx), p.Kind, p.Version, id, p.Revision, h, p.Actor, p.Action, p.Reason, p.At, now, p.Seq})
				listed.add(p.Kind, id)
				if err := rng.Append(h, visit); err != nil {
					return false, err
				}
			}
			continue
		}
		if len(leaves) >= batch {
			more = true
			break
		}
		seqs = append(seqs, p.Seq)
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
		idx := size + uint64(len(leaves))
		leaves = append(leaves, []any{site, int64(idx), p.Kind, p.Version, p.RecordID, p.Revision, p.LeafHash, p.Actor, p.Action, p.Reason, p.At, now, p.Seq})
		listed.add(p.Kind, p.RecordID)
		if err := rng.Append(p.LeafHash, visit); err != nil {
			return false, err
		}
	}
	// Leaves and nodes leave in the binary COPY format, encoded here in one
	// pass (a large pending entry makes thousands of each).
	for _, c := range []struct {
		table string
		cols  []string
		types []uint32
		rows  [][]any
	}{
		{"log_leaves", leafColumns, leafTypes, leaves},
		{"log_nodes", nodeColumns, nodeTypes, nodes},
	} {
		if len(c.rows) == 0 {
			continue
		}
		data, err := encodeCopyRows(c.table, c.cols, c.types, c.rows)
		if err == nil {
			err = copyIn(ctx, tx, data)
		}
		if err != nil {
			return false, fmt.Errorf("%s: %w", c.table, err)
		}
	}
	if len(rejected) > 0 {
		if _, err := tx.CopyFrom(ctx, pgx.Identifier{"log_rejected"}, []string{"seq", "site", "kind", "record_id", "revision", "why", "rejected_at"},
			pgx.CopyFromRows(rejected)); err != nil {
			return false, fmt.Errorf("log_rejected: %w", err)
		}
	}
	if _, err := tx.Exec(ctx, `DELETE FROM log_pending WHERE site = $1 AND seq = ANY($2)`, site, seqs); err != nil {
		return false, err
	}
	if err := listed.refresh(ctx, tx, site); err != nil {
		return false, fmt.Errorf("coupon_list: %w", err)
	}
	if err := refreshSectionList(ctx, tx, site, listed.sections); err != nil {
		return false, fmt.Errorf("section_list: %w", err)
	}
	if len(leaves) > 0 {
		root, err := rng.GetRootHash(nil)
		if err != nil {
			return false, err
		}
		note, err := logfmt.SignCheckpoint(key, site, rng.End(), root)
		if err != nil {
			return false, err
		}
		if _, err := tx.Exec(ctx, `INSERT INTO log_checkpoints (site, size, root, range_hashes, note, created_at)
			VALUES ($1, $2, $3, $4, $5, $6)`, site, int64(rng.End()), root, rng.Hashes(), note, now); err != nil {
			return false, err
		}
	}
	return more, tx.Commit(ctx)
}

// The columns the sequencer copies into log_leaves and log_nodes, and their
// types (migration 000009).
var (
	leafColumns = []string{"site", "leaf_index", "kind", "version", "record_id", "revision", "leaf_hash",
		"actor", "action", "reason", "at", "integrated_at", "pending_seq"}
	leafTypes = []uint32{pgtype.TextOID, pgtype.Int8OID, pgtype.TextOID, pgtype.Int4OID, pgtype.UUIDOID, pgtype.Int4OID,
		pgtype.ByteaOID, pgtype.TextOID, pgtype.TextOID, pgtype.TextOID, pgtype.TimestamptzOID, pgtype.TimestamptzOID, pgtype.Int8OID}
	nodeColumns = []string{"site", "tree_level", "tree_index", "hash"}
	nodeTypes   = []uint32{pgtype.TextOID, pgtype.Int2OID, pgtype.Int8OID, pgtype.ByteaOID}
)

var rangeFactory = &compact.RangeFactory{Hash: logfmt.HashChildren}

// latestRange reads the compact range of the site's latest checkpoint.
func latestRange(ctx context.Context, q querier, site string) (uint64, *compact.Range, error) {
	var size int64
	var hashes [][]byte
	err := q.QueryRow(ctx, `SELECT size, range_hashes FROM log_checkpoints WHERE site = $1 ORDER BY size DESC LIMIT 1`, site).Scan(&size, &hashes)
	if errors.Is(err, pgx.ErrNoRows) {
		return 0, rangeFactory.NewEmptyRange(0), nil
	}
	if err != nil {
		return 0, nil, err
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

// kickSequencer tells this process's sequencer that a write committed.
func (s *Store) kickSequencer() {
	select {
	case s.kick <- struct{}{}:
	default:
	}
}

// awaitLogged waits, up to LogWait, until every leaf of the site pending when
// it was called is sequenced, so a list read right after a write shows it.
// Without a running sequencer it gives up and the list is merely stale.
func (s *Store) awaitLogged(ctx context.Context, site string) {
	var last *int64
	if err := s.pool.QueryRow(ctx, lastPending, site).Scan(&last); err != nil || last == nil {
		return
	}
	s.awaitSequenced(ctx, site, *last)
}

// lastPending is the newest pending leaf of site $1 (NULL: none).
const lastPending = `SELECT max(seq) FROM log_pending WHERE site = $1`

// awaitSequenced waits, up to LogWait, until the site has no pending leaf
// at or below sequence last.
func (s *Store) awaitSequenced(ctx context.Context, site string, last int64) {
	s.kickSequencer()
	deadline := time.Now().Add(LogWait)
	for wait := time.Millisecond; time.Now().Before(deadline); wait = min(2*wait, 20*time.Millisecond) {
		select {
		case <-ctx.Done():
			return
		case <-time.After(wait):
		}
		var left bool
		if err := s.pool.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM log_pending WHERE site = $1 AND seq <= $2)`, site, last).Scan(&left); err != nil || !left {
			return
		}
	}
}

// LogWait bounds how long a list waits for the sequencer (awaitLogged).
var LogWait = 3 * time.Second
