// Package forward moves what a bay records from its local spool (an SQLite
// history with an outbox) to the lab's central history on a PostgreSQL
// server, in the order it was recorded, exactly once.
//
// Every result is committed to the spool first, with an outbox entry in
// the same transaction, so the bay keeps working while the server is
// away. The forwarder takes the oldest entries (a batch at a time), stores
// them in the central history in one transaction (db.Receive), and only
// then deletes them from the outbox. A daemon killed between the two
// sends the batch again when it starts: the central history recognises
// each hit by its content hash under the bay's path and stores nothing
// twice. While the server is unreachable, or another daemon holds the
// bay, the forwarder keeps the last error in the spool for status and
// tries again with a growing pause.
//
// On the central history a forwarded file's path is the bay's path
// prefixed with the bay's name ("bay-2:/data/export/hit.csv"), so that two
// bays with the same export folder never overwrite each other's file
// rows, and a hit without a bay in its metadata gets the forwarding bay's
// name. Recording times there are the server's clock; the hit time is
// the bay's (the recorder's file time or metadata).
package forward

import (
	"context"
	"errors"
	"sync"
	"time"

	"github.com/ringlog/ringlog/db"
)

// Config says what to forward where.
type Config struct {
	Spool   *db.DB     // the bay's spool, opened with db.Options{Spool: true}
	Target  string     // the central history: a postgres:// URL
	Options db.Options // how to open it (password file)
	Bay     string     // this bay's name: the lock key and the path prefix

	Batch    int           // entries per central transaction; default 200
	MinRetry time.Duration // first pause after a failure; default 1 s
	MaxRetry time.Duration // longest pause; default 30 s
	Poll     time.Duration // look at the outbox this often without a Kick; default 5 s

	// OnForwarded and OnError, when set, are told of each batch stored
	// and of each failure (logging).
	OnForwarded func(n int, backlog int)
	OnError     func(err error)
}

// Forwarder forwards a spool's outbox. Run it in one goroutine; Kick may
// be called from any.
type Forwarder struct {
	cfg  Config
	kick chan struct{}

	mu      sync.Mutex
	central *db.DB
	lock    *db.BayLock
}

// New checks the configuration and returns a Forwarder that has not yet
// connected.
func New(cfg Config) (*Forwarder, error) {
	if cfg.Spool == nil {
		return nil, errors.New("forward: no spool")
	}
	if cfg.Target == "" {
		return nil, errors.New("forward: no central history")
	}
	if cfg.Bay == "" {
		return nil, errors.New("forward: no bay name")
	}
	if cfg.Batch <= 0 {
		cfg.Batch = 200
	}
	if cfg.MinRetry <= 0 {
		cfg.MinRetry = time.Second
	}
	if cfg.MaxRetry < cfg.MinRetry {
		cfg.MaxRetry = max(30*time.Second, cfg.MinRetry)
	}
	if cfg.Poll <= 0 {
		cfg.Poll = 5 * time.Second
	}
	return &Forwarder{cfg: cfg, kick: make(chan struct{}, 1)}, nil
}

// CentralPath is the path under which the central history records a file
// forwarded from bay.
func CentralPath(bay, path string) string { return bay + ":" + path }

// Connect opens the central history (applying its migrations) and takes
// the bay's lock, unless both are already done. It fails with a
// *db.LockedError when another daemon records this bay.
func (f *Forwarder) Connect(ctx context.Context) error {
	f.mu.Lock()
	defer f.mu.Unlock()
	if f.central == nil {
		c, err := db.OpenWith(ctx, f.cfg.Target, f.cfg.Options)
		if err != nil {
			return err
		}
		f.central = c
	}
	if f.lock == nil {
		l, err := f.central.LockBay(ctx, f.cfg.Bay)
		if err != nil {
			return err
		}
		f.lock = l
		return nil
	}
	return f.lock.Check(ctx)
}

// drop forgets the connection after a failure; the next round connects
// again (the server may have restarted).
func (f *Forwarder) drop() {
	f.mu.Lock()
	defer f.mu.Unlock()
	if f.lock != nil {
		_ = f.lock.Release()
		f.lock = nil
	}
	if f.central != nil {
		_ = f.central.Close()
		f.central = nil
	}
}

// Close releases the bay and closes the central history.
func (f *Forwarder) Close() error {
	f.drop()
	return nil
}

// Kick tells the forwarder that the outbox has new entries.
func (f *Forwarder) Kick() {
	select {
	case f.kick <- struct{}{}:
	default:
	}
}

// Flush forwards until the outbox is empty and returns how many entries
// it forwarded; it stops at the first error.
func (f *Forwarder) Flush(ctx context.Context) (int, error) {
	n := 0
	for {
		if err := ctx.Err(); err != nil {
			return n, err
		}
		if err := f.Connect(ctx); err != nil {
			var le *db.LockedError
			if !errors.As(err, &le) {
				f.drop()
			}
			return n, err
		}
		batch, err := f.cfg.Spool.Outbox(ctx, f.cfg.Batch)
		if err != nil {
			return n, err
		}
		if len(batch) == 0 {
			return n, nil
		}
		for i := range batch {
			b := &batch[i]
			b.File.Path = CentralPath(f.cfg.Bay, b.File.Path)
			if !b.Failure && b.Meta.Bay == "" {
				b.Meta.Bay = f.cfg.Bay
			}
		}
		f.mu.Lock()
		central := f.central
		f.mu.Unlock()
		if _, err := central.Receive(ctx, batch); err != nil {
			f.drop()
			return n, err
		}
		// The central history has the batch. A crash before the next line
		// sends it again, which stores nothing new.
		if err := f.cfg.Spool.Forwarded(context.WithoutCancel(ctx), batch[len(batch)-1].Seq, len(batch)); err != nil {
			return n, err
		}
		n += len(batch)
		if f.cfg.OnForwarded != nil {
			st, _ := f.cfg.Spool.ForwardStatus(ctx)
			f.cfg.OnForwarded(len(batch), st.Backlog)
		}
	}
}

// Run forwards until ctx ends: at once, after each Kick, every Poll, and
// after a failure with a pause that doubles up to MaxRetry. Failures are
// kept in the spool (db.ForwardStatus) and given to OnError; Run itself
// returns nil when ctx ends.
func (f *Forwarder) Run(ctx context.Context) error {
	pause := f.cfg.MinRetry
	for {
		_, err := f.Flush(ctx)
		if ctx.Err() != nil {
			return nil
		}
		wait := f.cfg.Poll
		if err != nil {
			msg := "forwarding: " + err.Error()
			_ = f.cfg.Spool.NoteForwardError(context.WithoutCancel(ctx), msg)
			if f.cfg.OnError != nil {
				f.cfg.OnError(err)
			}
			wait, pause = pause, min(2*pause, f.cfg.MaxRetry)
		} else {
			pause = f.cfg.MinRetry
		}
		t := time.NewTimer(wait)
	waiting:
		for {
			select {
			case <-ctx.Done():
				t.Stop()
				return nil
			case <-t.C:
				break waiting
			case <-f.kick:
				if err == nil {
					t.Stop()
					break waiting
				}
				// After a failure a new result does not cut the pause short.
			}
		}
	}
}
