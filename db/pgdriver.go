package db

import (
	"context"
	"database/sql/driver"
	"strings"
	"unicode/utf8"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/stdlib"
)

// pgConnector hands database/sql connections to PostgreSQL (pgx) that
// speak this package's portable SQL: placeholders are rebound from '?' to
// $N, and arguments are converted the way the SQLite driver converts them
// (a bool becomes 0 or 1 for an INTEGER column, a named string type its
// string). Strings are made valid UTF-8 without NUL bytes, which
// PostgreSQL's text cannot hold (SQLite stores them as they are): a file
// name in another encoding is kept readable instead of failing to store.
type pgConnector struct {
	inner driver.Connector
}

func newPGConnector(cfg *pgx.ConnConfig) driver.Connector {
	return pgConnector{inner: stdlib.GetConnector(*cfg)}
}

func (c pgConnector) Connect(ctx context.Context) (driver.Conn, error) {
	conn, err := c.inner.Connect(ctx)
	if err != nil {
		return nil, err
	}
	sc, ok := conn.(*stdlib.Conn)
	if !ok {
		return conn, nil
	}
	return &pgConn{Conn: sc}, nil
}

func (c pgConnector) Driver() driver.Driver { return c.inner.Driver() }

// pgConn is a pgx connection with the rebinding and argument conversion
// above; every other method is pgx's own.
type pgConn struct {
	*stdlib.Conn
}

func (c *pgConn) Prepare(query string) (driver.Stmt, error) {
	return c.Conn.Prepare(rebind(query))
}

func (c *pgConn) PrepareContext(ctx context.Context, query string) (driver.Stmt, error) {
	return c.Conn.PrepareContext(ctx, rebind(query))
}

func (c *pgConn) ExecContext(ctx context.Context, query string, args []driver.NamedValue) (driver.Result, error) {
	return c.Conn.ExecContext(ctx, rebind(query), args)
}

func (c *pgConn) QueryContext(ctx context.Context, query string, args []driver.NamedValue) (driver.Rows, error) {
	return c.Conn.QueryContext(ctx, rebind(query), args)
}

// CheckNamedValue converts an argument as database/sql would for a driver
// without its own conversion, then maps bool to 0/1 and cleans strings.
func (c *pgConn) CheckNamedValue(nv *driver.NamedValue) error {
	v, err := driver.DefaultParameterConverter.ConvertValue(nv.Value)
	if err != nil {
		return err
	}
	switch x := v.(type) {
	case bool:
		if x {
			v = int64(1)
		} else {
			v = int64(0)
		}
	case string:
		v = pgText(x)
	}
	nv.Value = v
	return nil
}

// pgText makes s storable in a PostgreSQL text column: invalid UTF-8
// sequences and NUL bytes become U+FFFD.
func pgText(s string) string {
	if utf8.ValidString(s) && strings.IndexByte(s, 0) < 0 {
		return s
	}
	s = strings.ToValidUTF8(s, "\uFFFD")
	return strings.ReplaceAll(s, "\x00", "\uFFFD")
}
