package main

// The live page at the bay ([live] in the configuration): the daemon
// wiring of package report/live.

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"net"
	"os"
	"strconv"
	"strings"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/report/live"
)

// LiveConfig is the [live] section. Without it there is no listener.
type LiveConfig struct {
	// Listen is the address of the page, e.g. "127.0.0.1:8620".
	Listen string `toml:"listen"`
	// Token is required of every client when set; it must be set to
	// listen on anything but a loopback address. The environment
	// variable RINGLOG_LIVE_TOKEN takes precedence.
	Token string `toml:"token"`
}

// liveTokenEnv names the environment variable that holds the token.
const liveTokenEnv = "RINGLOG_LIVE_TOKEN"

// liveToken returns the token: the environment's, else the config's.
func (c *LiveConfig) liveToken() string {
	if t := os.Getenv(liveTokenEnv); t != "" {
		return t
	}
	return c.Token
}

// openLive listens on the [live] address. It refuses an address other
// than loopback without a token.
func (m *Main) openLive() error {
	lc := m.Config.Live
	if lc == nil {
		return nil
	}
	if lc.Listen == "" {
		return fmt.Errorf("config %s: [live] listen is not set (write e.g. listen = \"127.0.0.1:8620\")", m.Config.path)
	}
	ln, err := net.Listen("tcp", lc.Listen)
	if err != nil {
		return fmt.Errorf("live page: %w", err)
	}
	token := lc.liveToken()
	if err := live.CheckListen(ln.Addr(), token); err != nil {
		ln.Close()
		return fmt.Errorf("config %s: %w", m.Config.path, err)
	}
	cfg := m.Config
	opt := dailyOptions(cfg, time.Now(), cfg.Database)
	srv, err := live.New(m.store, live.Options{
		Token: token, ReportFolder: reportFolder(cfg), Expected: opt.Expected, Read: opt.Read,
		HitJSON:   func(h db.Hit) any { return toHitJSON(h) },
		Status:    func(ctx context.Context) (any, error) { return liveStatus(ctx, cfg.Database) },
		Generator: versionString(), Database: cfg.Database,
		Log: func(msg string, err error) { m.Log.Warn().Err(err).Msg(msg) },
	})
	if err != nil {
		ln.Close()
		return fmt.Errorf("config %s: %w", m.Config.path, err)
	}
	m.live, m.liveLn, m.liveURL = srv, ln, liveURL(ln.Addr())
	return nil
}

// LiveURL returns the address of the live page ("" without one).
func (m *Main) LiveURL() string { return m.liveURL }

// liveURL is the URL of a listener; an unspecified address (all
// interfaces) is named by the host name.
func liveURL(addr net.Addr) string {
	ta, ok := addr.(*net.TCPAddr)
	if !ok {
		return "http://" + addr.String() + "/"
	}
	host := ta.IP.String()
	if ta.IP.IsUnspecified() {
		if h, err := os.Hostname(); err == nil {
			host = h
		}
	}
	return "http://" + net.JoinHostPort(host, strconv.Itoa(ta.Port)) + "/"
}

// LiveLink returns the one-time link that lets a browser in ("" without a
// token).
func (m *Main) LiveLink() string {
	if m.live == nil {
		return ""
	}
	l := m.live.OneTimeLink()
	if l == "" {
		return ""
	}
	return strings.TrimSuffix(m.liveURL, "/") + l
}

// serveLive serves the live page until ctx ends; the returned function
// waits for it to stop.
func (m *Main) serveLive(ctx context.Context) (wait func()) {
	if m.live == nil {
		return func() {}
	}
	ev := m.Log.Info().Str("url", m.LiveURL())
	if l := m.LiveLink(); l != "" {
		ev = ev.Str("one_time_link", l)
	}
	ev.Msg("live page")
	ln := m.liveLn
	m.liveLn = nil // Serve closes it
	done := make(chan struct{})
	go func() {
		defer close(done)
		if err := m.live.Serve(ctx, ln); err != nil {
			m.Log.Error().Err(err).Msg("live page stopped")
		}
	}()
	return func() { <-done }
}

// demoLiveAddr is the demo's live page address: the usual port when it is
// free, else any free port (another daemon may have the usual one).
func demoLiveAddr() string {
	const usual = "127.0.0.1:8620"
	ln, err := net.Listen("tcp", usual)
	if err != nil {
		return "127.0.0.1:0"
	}
	ln.Close()
	return usual
}

// liveStatus is what 'status --json' prints for the database, run as the
// command runs it, so that /api/status says exactly the same.
func liveStatus(ctx context.Context, dbPath string) (any, error) {
	var out, errOut bytes.Buffer
	if err := runStatus(ctx, &env{stdout: &out, stderr: &errOut, stdin: strings.NewReader("")}, []string{"--db", dbPath, "--json"}); err != nil {
		return nil, err
	}
	return json.RawMessage(bytes.TrimSpace(out.Bytes())), nil
}
