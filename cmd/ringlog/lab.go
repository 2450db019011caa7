package main

import (
	"context"
	"errors"
	"fmt"
	"net/url"
	"os"
	"strings"
	"time"

	"github.com/rs/zerolog"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/db/forward"
)

// A bay of a lab records into a central PostgreSQL history: the daemon
// commits every result to its local spool first and forwards from there
// (package db/forward). This file wires that; the work is in db.

// defaultSpool is the spool's file name beside the config file.
const defaultSpool = "ringlog-spool.db"

// validateLab checks and completes the keys of a lab bay: spool (default
// beside the config file), bay (default: the host name), password_file
// (carried to every command inside the database URL, as ringlog's own
// parameter password_file, never the password itself).
func (c *Config) validateLab(abs func(string) string) error {
	if !db.IsPostgres(c.Database) {
		for k, v := range map[string]string{"spool": c.Spool, "bay": c.Bay, "password_file": c.PasswordFile} {
			if v != "" {
				return fmt.Errorf("config %s: %s is for a PostgreSQL database (database = \"postgres://...\"); this database is an SQLite file", c.path, k)
			}
		}
		return nil
	}
	u, err := url.Parse(c.Database)
	if err != nil {
		return fmt.Errorf("config %s: database: %v", c.path, err)
	}
	if _, has := u.User.Password(); has || u.Query().Has("password") {
		return fmt.Errorf("config %s: the database URL carries a password; remove it and use PGPASSWORD, "+
			"~/.pgpass (PGPASSFILE) or password_file = \"FILE\" (readable by its owner only)", c.path)
	}
	if c.Spool == "" {
		c.Spool = defaultSpool
	}
	c.Spool = abs(c.Spool)
	if db.IsPostgres(c.Spool) {
		return fmt.Errorf("config %s: spool must be a local file, not a server", c.path)
	}
	if c.Bay == "" {
		h, err := os.Hostname()
		if err != nil || h == "" {
			return fmt.Errorf("config %s: bay is not set and the host name is unknown; write bay = \"NAME\"", c.path)
		}
		c.Bay = h
	}
	if strings.ContainsAny(c.Bay, "\x00\r\n") || len(c.Bay) > 40 {
		return fmt.Errorf("config %s: bay %q: use at most 40 characters, no line breaks", c.path, c.Bay)
	}
	if c.PasswordFile != "" {
		c.PasswordFile = abs(c.PasswordFile)
		if _, err := db.ReadPasswordFile(c.PasswordFile); err != nil {
			return fmt.Errorf("config %s: %w", c.path, err)
		}
		q := u.Query()
		q.Set("password_file", c.PasswordFile)
		u.RawQuery = q.Encode()
		c.Database = u.String()
	}
	return nil
}

// openDaemonStore opens what the daemon records into: the SQLite history
// with its one-daemon lock; or, for a PostgreSQL database, the bay's spool
// (locked per file) and a forwarder that holds the bay's lock on the
// server. A server that cannot be reached does not stop the daemon: it
// records into the spool and forwards when the server is back. Another
// daemon recording the same bay does stop it.
func openDaemonStore(ctx context.Context, cfg *Config, log zerolog.Logger) (*db.DB, func() error, *forward.Forwarder, error) {
	if !db.IsPostgres(cfg.Database) {
		store, err := db.Open(ctx, cfg.Database)
		if err != nil {
			return nil, nil, nil, err
		}
		release, err := store.LockWriter()
		if err != nil {
			store.Close()
			return nil, nil, nil, err
		}
		return store, release, nil, nil
	}
	spool, err := db.OpenWith(ctx, cfg.Spool, db.Options{Spool: true})
	if err != nil {
		return nil, nil, nil, err
	}
	release, err := spool.LockWriter()
	if err != nil {
		spool.Close()
		return nil, nil, nil, err
	}
	fwd, err := forward.New(forward.Config{
		Spool: spool, Target: cfg.Database, Bay: cfg.Bay,
		OnForwarded: func(n, backlog int) {
			log.Info().Int("forwarded", n).Int("waiting", backlog).Msg("results forwarded to the central history")
		},
		OnError: func(err error) {
			log.Warn().Err(err).Msg("central history not reachable; results wait in the spool")
		},
	})
	if err != nil {
		release()
		spool.Close()
		return nil, nil, nil, err
	}
	cctx, cancel := context.WithTimeout(ctx, 15*time.Second)
	defer cancel()
	if err := fwd.Connect(cctx); err != nil {
		if errors.Is(err, db.ErrLocked) {
			fwd.Close()
			release()
			spool.Close()
			return nil, nil, nil, err
		}
		log.Warn().Err(err).Str("spool", cfg.Spool).Msg("central history not reachable at start; recording into the spool")
		_ = spool.NoteForwardError(ctx, "forwarding: "+err.Error())
	}
	return spool, release, fwd, nil
}

// printForwardStatus writes the spool lines of status.
func printForwardStatus(w interface{ Write([]byte) (int, error) }, spoolPath string, fs db.ForwardStatus) {
	fmt.Fprintf(w, "spool     %s: %d result(s) waiting to be forwarded", spoolPath, fs.Backlog)
	if !fs.Oldest.IsZero() {
		fmt.Fprintf(w, ", the oldest recorded %s", fs.Oldest.Local().Format(time.DateTime))
	}
	fmt.Fprintln(w)
	if !fs.LastOK.IsZero() {
		fmt.Fprintf(w, "forwarded %d, last at %s\n", fs.Forwarded, fs.LastOK.Local().Format(time.DateTime))
	}
	if fs.LastError != "" {
		fmt.Fprintf(w, "forward error %s (%s)\n", fs.LastError, fs.ErrorAt.Local().Format(time.DateTime))
	}
}

func forwardJSON(spoolPath string, fs db.ForwardStatus) map[string]any {
	out := map[string]any{"spool": spoolPath, "backlog": fs.Backlog, "forwarded": fs.Forwarded, "last_error": fs.LastError}
	if !fs.Oldest.IsZero() {
		out["oldest_waiting"] = fs.Oldest
	}
	if !fs.LastOK.IsZero() {
		out["last_forwarded"] = fs.LastOK
	}
	if !fs.ErrorAt.IsZero() {
		out["error_time"] = fs.ErrorAt
	}
	return out
}

// runForwarder forwards the spool while the daemon runs; the returned
// function stops it after one last attempt (a few seconds at most) to
// send what the daemon recorded last. Without a forwarder it does nothing.
func (m *Main) runForwarder(ctx context.Context) (stop func()) {
	if m.fwd == nil {
		return func() {}
	}
	fctx, cancel := context.WithCancel(context.WithoutCancel(ctx))
	done := make(chan struct{})
	go func() { defer close(done); m.fwd.Run(fctx) }()
	return func() {
		cancel()
		<-done
		lctx, lcancel := context.WithTimeout(context.Background(), 5*time.Second)
		defer lcancel()
		if n, err := m.fwd.Flush(lctx); err != nil {
			m.Log.Warn().Err(err).Msg("results left in the spool; they are forwarded when the daemon runs again")
		} else if n > 0 {
			m.Log.Info().Int("forwarded", n).Msg("results forwarded at stop")
		}
	}
}

// labSpoolStatus returns the spool of the bay that the config at cfgPath
// describes and how its forwarding stands; nil when the config names no
// PostgreSQL database or its spool does not exist yet.
func labSpoolStatus(ctx context.Context, cfgPath string) (string, *db.ForwardStatus) {
	if cfgPath == "" {
		return "", nil
	}
	cfg, err := loadConfig(cfgPath)
	if err != nil || !db.IsPostgres(cfg.Database) {
		return "", nil
	}
	if _, err := os.Stat(cfg.Spool); err != nil {
		return "", nil
	}
	spool, err := db.OpenReadOnly(ctx, cfg.Spool)
	if err != nil {
		return "", nil
	}
	defer spool.Close()
	fs, err := spool.ForwardStatus(ctx)
	if err != nil {
		return "", nil
	}
	return cfg.Spool, &fs
}
