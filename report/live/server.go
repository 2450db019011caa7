package live

import (
	"bytes"
	"context"
	"crypto/hmac"
	"crypto/rand"
	"crypto/sha256"
	"crypto/subtle"
	"encoding/hex"
	"errors"
	"fmt"
	"net"
	"net/http"
	"strings"
	"sync"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline/read"
	"github.com/ringlog/ringlog/report"
	"github.com/ringlog/ringlog/report/page"
)

// Store is the part of the history the live page reads; *db.DB has it.
type Store interface {
	page.Source
	RecentHits(ctx context.Context, n int) ([]db.Hit, error)
	HitsAfter(ctx context.Context, afterID int64, limit int) ([]db.Hit, error)
	TallyRecorded(ctx context.Context, since, until time.Time) ([]db.Tally, error)
	Status(ctx context.Context) (db.Status, error)
}

// Options set up a live server. Zero values take the defaults.
type Options struct {
	// Token, when not empty, is required of every request: as
	// "Authorization: Bearer TOKEN", or through the cookie the one-time
	// link (LoginPath) sets. Without a token only loopback clients that
	// name a loopback host are served.
	Token string
	// ReportFolder is the folder whose files (directly inside it) are
	// served under /reports/; "" serves none.
	ReportFolder string
	// Expected returns the expected modes of a prototype (configuration).
	Expected func(prototype string) []report.Expected
	// Read returns the options to read a hit's file as the daemon did.
	Read func(h db.Hit) read.Options
	// HitJSON shapes a hit like a line of 'history --json'.
	HitJSON func(h db.Hit) any
	// Status returns what 'status --json' says.
	Status func(ctx context.Context) (any, error)
	// Generator and Database name the program and the database in the
	// reports' footers.
	Generator, Database string
	// Now is the clock (default time.Now).
	Now func() time.Time
	// Log receives the server's problems (default: dropped).
	Log    func(msg string, err error)
	Limits Limits
}

// Limits bound what clients can take of the daemon.
type Limits struct {
	MaxConns       int           // open connections (default 128); more are closed at once
	MaxStreams     int           // open event streams (default 64); more get 503
	Rate           float64       // requests per second per client address (default 20)
	Burst          int           // requests a client may make at once (default 120)
	StreamLifetime time.Duration // an event stream is closed after this (default 30 min); the browser reconnects
	Heartbeat      time.Duration // a comment line keeps idle streams alive (default 15 s)
	RequestTimeout time.Duration // reading a request and writing a reply (default 30 s; reports 60 s)
	HeaderTimeout  time.Duration // reading a request's headers (default 5 s)
	MaxReports     int           // reports drawn at once (default 1); more get 503
}

func (l *Limits) defaults() {
	def := func(v *int, d int) {
		if *v <= 0 {
			*v = d
		}
	}
	def(&l.MaxConns, 128)
	def(&l.MaxStreams, 64)
	def(&l.Burst, 120)
	def(&l.MaxReports, 1)
	if l.Rate <= 0 {
		l.Rate = 20
	}
	if l.StreamLifetime <= 0 {
		l.StreamLifetime = 30 * time.Minute
	}
	if l.Heartbeat <= 0 {
		l.Heartbeat = 15 * time.Second
	}
	if l.RequestTimeout <= 0 {
		l.RequestTimeout = 30 * time.Second
	}
	if l.HeaderTimeout <= 0 {
		l.HeaderTimeout = 5 * time.Second
	}
}

// MinTokenLength is the shortest token accepted.
const MinTokenLength = 16

// cookieName is the cookie the one-time link sets.
const cookieName = "ringlog_live"

// LoginPath is the path of the one-time link.
const LoginPath = "/login"

// Server is the live page. Create it with New, serve it with Serve, and
// call Notify after every hit stored.
type Server struct {
	store   Store
	opt     Options
	handler http.Handler
	hub     *hub
	notify  chan struct{}
	limiter *limiter
	reports chan struct{}
	plots   *plotCache

	mu       sync.Mutex
	oneTime  string // the one-time login key; "" once used
	rendered bool

	campMu sync.Mutex
	camp   *campaignCache
}

// New returns a server over store.
func New(store Store, opt Options) (*Server, error) {
	if opt.Token != "" && len(opt.Token) < MinTokenLength {
		return nil, fmt.Errorf("the live page's token is too short: use at least %d characters", MinTokenLength)
	}
	if opt.Now == nil {
		opt.Now = time.Now
	}
	if opt.Log == nil {
		opt.Log = func(string, error) {}
	}
	opt.Limits.defaults()
	s := &Server{store: store, opt: opt, notify: make(chan struct{}, 1),
		hub: newHub(opt.Limits.MaxStreams), limiter: newLimiter(opt.Limits.Rate, opt.Limits.Burst),
		reports: make(chan struct{}, opt.Limits.MaxReports), plots: newPlotCache(16)}
	if opt.Token != "" {
		s.oneTime = randomHex(24)
	}
	s.handler = s.routes()
	return s, nil
}

// Notify tells the server that a hit was stored. It never blocks: updates
// that arrive while one is being drawn are drawn together.
func (s *Server) Notify() {
	select {
	case s.notify <- struct{}{}:
	default:
	}
}

// OneTimeLink returns the path and query of the one-time link that sets the
// login cookie, to be printed at start; "" without a token or once used.
func (s *Server) OneTimeLink() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.oneTime == "" {
		return ""
	}
	return LoginPath + "?key=" + s.oneTime
}

// Handler returns the server's handler with every rule applied.
func (s *Server) Handler() http.Handler { return s.handler }

// Serve serves on ln until ctx ends, then closes the event streams and
// the listener. It draws the page at once and after every Notify.
func (s *Server) Serve(ctx context.Context, ln net.Listener) error {
	lim := s.opt.Limits
	srv := &http.Server{
		Handler:           s.handler,
		ReadHeaderTimeout: lim.HeaderTimeout,
		ReadTimeout:       lim.RequestTimeout,
		WriteTimeout:      2 * lim.RequestTimeout, // event streams extend their own deadline
		IdleTimeout:       60 * time.Second,
		MaxHeaderBytes:    16 << 10,
		ErrorLog:          nil,
		BaseContext:       func(net.Listener) context.Context { return ctx },
	}
	rctx, stop := context.WithCancel(ctx)
	defer stop()
	go s.renderLoop(rctx)
	errc := make(chan error, 1)
	go func() { errc <- srv.Serve(limitListener(ln, lim.MaxConns)) }()
	select {
	case <-ctx.Done():
	case err := <-errc:
		s.hub.close()
		return err
	}
	s.hub.close()
	sctx, cancel := context.WithTimeout(context.Background(), 3*time.Second)
	defer cancel()
	err := srv.Shutdown(sctx)
	if errors.Is(err, context.DeadlineExceeded) {
		err = srv.Close()
	}
	if e := <-errc; e != nil && !errors.Is(e, http.ErrServerClosed) && err == nil {
		err = e
	}
	return err
}

// minRenderGap is the least time between two drawings of the page: hits
// that arrive closer together (a burst) are drawn together, so that the
// page takes little from the recording.
const minRenderGap = 500 * time.Millisecond

// renderLoop draws the main part of the page after each notification (at
// most once per minRenderGap), and once a minute when the day changed.
func (s *Server) renderLoop(ctx context.Context) {
	s.render(ctx)
	last := time.Now()
	day := s.opt.Now().YearDay()
	tick := time.NewTicker(time.Minute)
	defer tick.Stop()
	for {
		select {
		case <-ctx.Done():
			return
		case <-s.notify:
			if wait := minRenderGap - time.Since(last); wait > 0 {
				select {
				case <-ctx.Done():
					return
				case <-time.After(wait):
				}
			}
			s.render(ctx)
			last = time.Now()
		case <-tick.C:
			if d := s.opt.Now().YearDay(); d != day {
				day = d
				s.render(ctx)
			}
		}
	}
}

// render draws the main part and hands it to the open pages.
func (s *Server) render(ctx context.Context) {
	b, id, err := s.renderMain(ctx)
	if err != nil {
		if ctx.Err() == nil {
			s.opt.Log("live page: drawing the page failed", err)
		}
		return
	}
	s.hub.publish(id, b)
	s.mu.Lock()
	s.rendered = true
	s.mu.Unlock()
}

func (s *Server) renderMain(ctx context.Context) ([]byte, int64, error) {
	v, err := s.buildView(ctx)
	if err != nil {
		return nil, 0, err
	}
	var buf bytes.Buffer
	if err := mainTmpl.Execute(&buf, v); err != nil {
		return nil, 0, err
	}
	var id int64
	if v.Last != nil {
		id = v.Last.ID
	}
	return buf.Bytes(), id, nil
}

// sessionValue is the cookie value: an HMAC of the token, so that the
// cookie survives a restart and changing the token revokes it.
func (s *Server) sessionValue() string {
	m := hmac.New(sha256.New, []byte(s.opt.Token))
	m.Write([]byte("ringlog live session"))
	return hex.EncodeToString(m.Sum(nil))
}

func randomHex(n int) string {
	b := make([]byte, n)
	if _, err := rand.Read(b); err != nil {
		panic(err) // crypto/rand does not fail on supported systems
	}
	return hex.EncodeToString(b)
}

func equal(a, b string) bool {
	return subtle.ConstantTimeCompare([]byte(a), []byte(b)) == 1
}

// authorised tells whether r carries the token or the session cookie.
func (s *Server) authorised(r *http.Request) bool {
	if s.opt.Token == "" {
		return true
	}
	if h := r.Header.Get("Authorization"); h != "" {
		scheme, tok, ok := strings.Cut(h, " ")
		return ok && strings.EqualFold(scheme, "Bearer") && equal(strings.TrimSpace(tok), s.opt.Token)
	}
	if c, err := r.Cookie(cookieName); err == nil {
		return equal(c.Value, s.sessionValue())
	}
	return false
}

// login handles the one-time link: it sets the session cookie once.
func (s *Server) login(w http.ResponseWriter, r *http.Request) {
	key := r.URL.Query().Get("key")
	s.mu.Lock()
	ok := s.oneTime != "" && key != "" && equal(key, s.oneTime)
	if ok {
		s.oneTime = ""
	}
	s.mu.Unlock()
	if !ok {
		writeError(w, http.StatusForbidden, "this link is not valid or was already used; ask for a new one (the daemon prints one at start)")
		return
	}
	http.SetCookie(w, &http.Cookie{Name: cookieName, Value: s.sessionValue(), Path: "/", MaxAge: 90 * 24 * 3600,
		HttpOnly: true, SameSite: http.SameSiteStrictMode, Secure: r.TLS != nil})
	http.Redirect(w, r, "/", http.StatusSeeOther)
}

// CheckListen returns an error when the listener is on an address other
// than loopback and there is no token. The message names the setting.
func CheckListen(addr net.Addr, token string) error {
	if token != "" {
		if len(token) < MinTokenLength {
			return fmt.Errorf("the [live] token is too short: use at least %d characters", MinTokenLength)
		}
		return nil
	}
	if IsLoopback(addr) {
		return nil
	}
	return fmt.Errorf("the live page listens on %s, which is not a loopback address: set a token ([live] token = \"...\" in the configuration, or the environment variable RINGLOG_LIVE_TOKEN), at least %d characters, or listen on 127.0.0.1", addr, MinTokenLength)
}

// IsLoopback tells whether a listener address is a loopback address.
func IsLoopback(addr net.Addr) bool {
	if ta, ok := addr.(*net.TCPAddr); ok {
		return ta.IP.IsLoopback()
	}
	host, _, err := net.SplitHostPort(addr.String())
	if err != nil {
		return false
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}

// loopbackHost tells whether a Host header names this machine by a
// loopback name or address.
func loopbackHost(host string) bool {
	h := host
	if hh, _, err := net.SplitHostPort(host); err == nil {
		h = hh
	}
	h = strings.TrimSuffix(strings.TrimPrefix(h, "["), "]")
	if strings.EqualFold(h, "localhost") {
		return true
	}
	ip := net.ParseIP(h)
	return ip != nil && ip.IsLoopback()
}
