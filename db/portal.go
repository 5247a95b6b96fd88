package db

import (
	"context"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgproto3"
)

// portal reads a query's rows a part at a time through the extended
// protocol: a named portal of the connection's open transaction, executed
// some rows at a time. A cursor's FETCH is a statement of its own, whose
// rows the server first stores whole and then sends (at 100,000 coupon
// rows that store cost the backend about 60% more than the query itself);
// an Execute of a portal sends its rows as it makes them. Unlike one
// streamed query, several portals, and other statements, can take turns on
// the one connection. The portal ends with the transaction.
type portal struct {
	conn *pgconn.PgConn
	name string
	fds  []pgconn.FieldDescription
	done bool
}

// openPortal plans sql as the portal name of tx's transaction, its results
// in the formats tx's connection reads best (binary where it knows the
// type, as a pgx query asks).
func openPortal(ctx context.Context, tx pgx.Tx, name, sql string) (*portal, error) {
	conn := tx.Conn().PgConn()
	p := &portal{conn: conn, name: name}
	fe := conn.Frontend()
	fe.Send(&pgproto3.Parse{Query: sql})
	fe.Send(&pgproto3.Describe{ObjectType: 'S'})
	fe.Send(&pgproto3.Sync{})
	var desc *pgproto3.RowDescription
	if err := p.exchange(ctx, func(m pgproto3.BackendMessage) error {
		if d, ok := m.(*pgproto3.RowDescription); ok {
			desc = d
		}
		return nil
	}); err != nil {
		return nil, err
	}
	if desc == nil {
		return nil, fmt.Errorf("db: portal %s: the query returns no rows", name)
	}
	tm := tx.Conn().TypeMap()
	formats := make([]int16, len(desc.Fields))
	p.fds = make([]pgconn.FieldDescription, len(desc.Fields))
	for i, f := range desc.Fields {
		formats[i] = tm.FormatCodeForOID(f.DataTypeOID)
		p.fds[i] = pgconn.FieldDescription{Name: string(f.Name), TableOID: f.TableOID, TableAttributeNumber: f.TableAttributeNumber,
			DataTypeOID: f.DataTypeOID, DataTypeSize: f.DataTypeSize, TypeModifier: f.TypeModifier, Format: formats[i]}
	}
	fe.Send(&pgproto3.Bind{DestinationPortal: name, ResultFormatCodes: formats})
	fe.Send(&pgproto3.Sync{})
	if err := p.exchange(ctx, func(pgproto3.BackendMessage) error { return nil }); err != nil {
		return nil, err
	}
	return p, nil
}

// fetch executes the portal for its next n rows, calling row with each
// row's raw values (valid during the call only). It returns how many rows
// came; after the last row the portal is done.
func (p *portal) fetch(ctx context.Context, n int, row func(raw [][]byte) error) (int, error) {
	if p.done {
		return 0, nil
	}
	p.conn.Frontend().Send(&pgproto3.Execute{Portal: p.name, MaxRows: uint32(n)})
	p.conn.Frontend().Send(&pgproto3.Sync{})
	got := 0
	err := p.exchange(ctx, func(m pgproto3.BackendMessage) error {
		switch m := m.(type) {
		case *pgproto3.DataRow:
			got++
			return row(m.Values)
		case *pgproto3.CommandComplete:
			p.done = true
		}
		return nil
	})
	return got, err
}

// exchange flushes what was sent, which ends in a Sync, and reads the
// answers up to the server's ReadyForQuery, passing each to handle. The
// first error (the server's, as a *pgconn.PgError, or handle's) is returned
// once the answers are read, so the connection stays in step.
func (p *portal) exchange(ctx context.Context, handle func(pgproto3.BackendMessage) error) error {
	if err := p.conn.Frontend().Flush(); err != nil {
		_ = p.conn.Conn().Close()
		return fmt.Errorf("db: portal %s: %w", p.name, err)
	}
	// The context is watched once for the whole exchange (ReceiveMessage
	// would set up a watch for every row): when it ends, the read's
	// deadline passes and the read fails.
	stop := context.AfterFunc(ctx, func() { _ = p.conn.Conn().SetReadDeadline(time.Unix(1, 0)) })
	defer stop()
	var first error
	for {
		m, err := p.conn.ReceiveMessage(context.Background())
		if err != nil {
			// Out of step with the server (a cancelled context leaves the
			// connection open): close it, so the transaction's rollback fails
			// and the pool drops the connection instead of reusing it.
			_ = p.conn.Conn().Close()
			return fmt.Errorf("db: portal %s: %w", p.name, err)
		}
		switch m := m.(type) {
		case *pgproto3.ReadyForQuery:
			return first
		case *pgproto3.ErrorResponse:
			if first == nil {
				first = pgconn.ErrorResponseToPgError(m)
			}
		default:
			if first == nil {
				first = handle(m)
			}
		}
	}
}
