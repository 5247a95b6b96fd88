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
// the one connection (portalConn). The portal ends with the transaction.
type portal struct {
	c    *portalConn
	name string
	fds  []pgconn.FieldDescription
	keep func(raw [][]byte) error // takes the rows of a part read for the connection's sake (settle)
	done bool
}

// portalConn is a connection whose portals take turns. The next part of one
// portal may be asked for ahead, so the server makes its rows while the
// last part's are used; before the connection serves anything else, settle
// reads that part (into its portal's keep).
type portalConn struct {
	tx    pgx.Tx
	conn  *pgconn.PgConn
	asked *portal // the portal whose next part was asked for and not yet read
}

func newPortalConn(tx pgx.Tx) *portalConn { return &portalConn{tx: tx, conn: tx.Conn().PgConn()} }

// open plans sql as the portal name of the connection's transaction, its
// results in the formats the connection reads best (binary where it knows
// the type, as a pgx query asks).
func (c *portalConn) open(ctx context.Context, name, sql string, keep func(raw [][]byte) error) (*portal, error) {
	if err := c.settle(ctx); err != nil {
		return nil, err
	}
	p := &portal{c: c, name: name, keep: keep}
	fe := c.conn.Frontend()
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
	tm := c.tx.Conn().TypeMap()
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

// settle reads the part asked ahead, if any, so the connection can serve
// something else.
func (c *portalConn) settle(ctx context.Context) error {
	p := c.asked
	if p == nil {
		return nil
	}
	c.asked = nil
	_, err := p.receive(ctx, p.keep)
	return err
}

// fetch reads the portal's next n rows (or the part asked ahead), calling
// row with each row's raw values (valid during the call only), and returns
// how many came; after the last row the portal is done. With ahead, it
// then asks for the next part.
func (p *portal) fetch(ctx context.Context, n int, row func(raw [][]byte) error, ahead bool) (int, error) {
	if p.c.asked == p {
		p.c.asked = nil
	} else {
		if err := p.c.settle(ctx); err != nil {
			return 0, err
		}
		if p.done {
			return 0, nil
		}
		p.ask(n)
	}
	got, err := p.receive(ctx, row)
	if err == nil && ahead && !p.done {
		p.ask(n)
		if err := p.c.conn.Frontend().Flush(); err != nil {
			_ = p.c.conn.Conn().Close()
			return got, fmt.Errorf("db: portal %s: %w", p.name, err)
		}
		p.c.asked = p
	}
	return got, err
}

// ask sends an Execute for the next n rows (flushed by the next exchange).
func (p *portal) ask(n int) {
	p.c.conn.Frontend().Send(&pgproto3.Execute{Portal: p.name, MaxRows: uint32(n)})
	p.c.conn.Frontend().Send(&pgproto3.Sync{})
}

// receive reads the answer to an Execute, passing each row to row.
func (p *portal) receive(ctx context.Context, row func(raw [][]byte) error) (int, error) {
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
	conn := p.c.conn
	if err := conn.Frontend().Flush(); err != nil {
		_ = conn.Conn().Close()
		return fmt.Errorf("db: portal %s: %w", p.name, err)
	}
	// The context is watched once for the whole exchange (ReceiveMessage
	// would set up a watch for every row): when it ends, the read's
	// deadline passes and the read fails.
	stop := context.AfterFunc(ctx, func() { _ = conn.Conn().SetReadDeadline(time.Unix(1, 0)) })
	defer stop()
	var first error
	for {
		m, err := conn.ReceiveMessage(context.Background())
		if err != nil {
			// Out of step with the server (a cancelled context leaves the
			// connection open): close it, so the transaction's rollback fails
			// and the pool drops the connection instead of reusing it.
			_ = conn.Conn().Close()
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
