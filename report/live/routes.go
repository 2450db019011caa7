package live

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net"
	"net/http"
	"strconv"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/report"
)

// routes returns the handler: the rules first, then the pages.
func (s *Server) routes() http.Handler {
	mux := http.NewServeMux()
	mux.HandleFunc("GET /{$}", s.page)
	mux.HandleFunc("GET /events", s.events)
	mux.HandleFunc("GET /api/last", s.apiLast)
	mux.HandleFunc("GET /api/hits", s.apiHits)
	mux.HandleFunc("GET /api/status", s.apiStatus)
	mux.HandleFunc("GET /plot/{name}", s.plot)
	mux.HandleFunc("GET /daily", s.daily)
	mux.HandleFunc("GET /compare", s.compare)
	mux.HandleFunc("GET /reports/{name}", s.reportFile)
	mux.HandleFunc("GET "+LoginPath, s.login)
	mux.HandleFunc("GET /favicon.svg", serveFavicon)
	mux.HandleFunc("GET /favicon.ico", serveFavicon)
	mux.HandleFunc("GET /", func(w http.ResponseWriter, r *http.Request) {
		writeError(w, http.StatusNotFound, "not found")
	})
	return s.guard(mux)
}

// guard applies the rules every request passes: hardening headers, GET
// and HEAD only, the Host check without a token, the request rate per
// client, and the token.
func (s *Server) guard(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		h := w.Header()
		h.Set("Content-Security-Policy", pageCSP)
		h.Set("X-Content-Type-Options", "nosniff")
		h.Set("X-Frame-Options", "DENY")
		h.Set("Referrer-Policy", "no-referrer")
		h.Set("Cross-Origin-Opener-Policy", "same-origin")
		h.Set("Cross-Origin-Resource-Policy", "same-origin")
		h.Set("Permissions-Policy", "camera=(), microphone=(), geolocation=(), usb=(), payment=()")
		h.Set("Cache-Control", "no-store")
		if r.Method != http.MethodGet && r.Method != http.MethodHead {
			h.Set("Allow", "GET, HEAD")
			writeError(w, http.StatusMethodNotAllowed, "the live page is read-only: only GET and HEAD")
			return
		}
		if s.opt.Token == "" && !loopbackHost(r.Host) {
			writeError(w, http.StatusMisdirectedRequest, "without a token the live page answers only to a loopback host name (127.0.0.1, ::1, localhost)")
			return
		}
		if !s.limiter.allow(clientOf(r), s.opt.Now()) {
			h.Set("Retry-After", "1")
			writeError(w, http.StatusTooManyRequests, "too many requests from this address; slow down")
			return
		}
		if r.URL.Path != LoginPath && !s.authorised(r) {
			h.Set("WWW-Authenticate", `Bearer realm="ringlog live"`)
			writeError(w, http.StatusUnauthorized, "a token is needed: send it as a bearer token, or open the one-time link the daemon printed at start")
			return
		}
		next.ServeHTTP(w, r)
	})
}

// clientOf is the address a request came from (without its port).
func clientOf(r *http.Request) string {
	host, _, err := net.SplitHostPort(r.RemoteAddr)
	if err != nil {
		return r.RemoteAddr
	}
	return host
}

// writeError writes a short plain-text error.
func writeError(w http.ResponseWriter, code int, msg string) {
	w.Header().Set("Content-Type", "text/plain; charset=utf-8")
	w.WriteHeader(code)
	fmt.Fprintln(w, msg)
}

// current returns the latest drawn main part, drawing it when none is.
func (s *Server) current(ctx context.Context) ([]byte, error) {
	if b, _, ok := s.hub.latest(); ok {
		return b, nil
	}
	b, _, err := s.renderMain(ctx)
	return b, err
}

// page serves the whole page.
func (s *Server) page(w http.ResponseWriter, r *http.Request) {
	main, err := s.current(r.Context())
	if err != nil {
		s.opt.Log("live page", err)
		writeError(w, http.StatusInternalServerError, "the page could not be drawn: "+err.Error())
		return
	}
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	var buf bytes.Buffer
	buf.Grow(len(pageHead) + len(main) + len(pageTail))
	buf.WriteString(pageHead)
	buf.Write(main)
	buf.WriteString(pageTail)
	w.Write(buf.Bytes())
}

// events is the server-sent event stream: the current main part at once,
// then each new one; a comment line as heartbeat.
func (s *Server) events(w http.ResponseWriter, r *http.Request) {
	sub, ok := s.hub.subscribe()
	if !ok {
		w.Header().Set("Retry-After", "10")
		writeError(w, http.StatusServiceUnavailable, "too many open live pages")
		return
	}
	defer s.hub.unsubscribe(sub)
	rc := http.NewResponseController(w)
	w.Header().Set("Content-Type", "text/event-stream; charset=utf-8")
	w.Header().Set("X-Accel-Buffering", "no")
	w.WriteHeader(http.StatusOK)
	if r.Method == http.MethodHead {
		return
	}
	lim := s.opt.Limits
	write := func(b []byte) bool {
		rc.SetWriteDeadline(time.Now().Add(lim.RequestTimeout))
		if _, err := w.Write(b); err != nil {
			return false
		}
		return rc.Flush() == nil
	}
	if !write([]byte("retry: 2000\n\n")) {
		return
	}
	var seq uint64
	send := func() bool {
		ev, n, ok := s.hub.latestEvent()
		if !ok || n == seq {
			return true
		}
		seq = n
		return write(ev)
	}
	if s.isRendered() && !send() {
		return
	}
	life := time.NewTimer(lim.StreamLifetime)
	defer life.Stop()
	beat := time.NewTicker(lim.Heartbeat)
	defer beat.Stop()
	for {
		select {
		case <-r.Context().Done():
			return
		case <-s.hub.done:
			return
		case <-life.C:
			return
		case <-sub:
			if !send() {
				return
			}
		case <-beat.C:
			if !write([]byte(": beat\n\n")) {
				return
			}
		}
	}
}

func (s *Server) isRendered() bool {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.rendered
}

// sseEvent formats one event; each line of data gets its own data field.
func sseEvent(name string, id int64, data []byte) []byte {
	var b bytes.Buffer
	fmt.Fprintf(&b, "event: %s\nid: %d\n", name, id)
	for _, line := range bytes.Split(data, []byte("\n")) {
		b.WriteString("data: ")
		b.Write(bytes.TrimSuffix(line, []byte("\r")))
		b.WriteByte('\n')
	}
	b.WriteByte('\n')
	return b.Bytes()
}

// writeJSON encodes v with report.JSON.
func (s *Server) writeJSON(w http.ResponseWriter, code int, v any) {
	b, err := report.JSON(v)
	if err != nil {
		writeError(w, http.StatusInternalServerError, err.Error())
		return
	}
	w.Header().Set("Content-Type", "application/json")
	w.WriteHeader(code)
	w.Write(append(b, '\n'))
}

// hitObject is a hit shaped by Options.HitJSON with its "id" added.
func (s *Server) hitObject(h db.Hit) (json.RawMessage, error) {
	var shaped any = h
	if s.opt.HitJSON != nil {
		shaped = s.opt.HitJSON(h)
	}
	b, err := report.JSON(shaped)
	if err != nil {
		return nil, err
	}
	var m map[string]json.RawMessage
	if err := json.Unmarshal(b, &m); err != nil {
		return nil, err
	}
	if _, ok := m["id"]; !ok {
		m["id"] = json.RawMessage(strconv.FormatInt(h.ID, 10))
	}
	return report.JSON(m)
}

func (s *Server) apiLast(w http.ResponseWriter, r *http.Request) {
	hits, err := s.store.RecentHits(r.Context(), 1)
	if err != nil {
		s.writeJSON(w, http.StatusInternalServerError, map[string]string{"error": err.Error()})
		return
	}
	if len(hits) == 0 {
		s.writeJSON(w, http.StatusNotFound, map[string]string{"error": "no hit recorded yet"})
		return
	}
	o, err := s.hitObject(hits[0])
	if err != nil {
		s.writeJSON(w, http.StatusInternalServerError, map[string]string{"error": err.Error()})
		return
	}
	s.writeJSON(w, http.StatusOK, o)
}

func (s *Server) apiHits(w http.ResponseWriter, r *http.Request) {
	since := int64(0)
	if v := r.URL.Query().Get("since"); v != "" {
		n, err := strconv.ParseInt(v, 10, 64)
		if err != nil || n < 0 {
			s.writeJSON(w, http.StatusBadRequest, map[string]string{"error": fmt.Sprintf("since=%q: give the id of a hit, a whole number 0 or more", v)})
			return
		}
		since = n
	}
	hits, err := s.store.HitsAfter(r.Context(), since, maxAPIHits)
	if err != nil {
		s.writeJSON(w, http.StatusInternalServerError, map[string]string{"error": err.Error()})
		return
	}
	out := make([]json.RawMessage, 0, len(hits))
	for _, h := range hits {
		o, err := s.hitObject(h)
		if err != nil {
			s.writeJSON(w, http.StatusInternalServerError, map[string]string{"error": err.Error()})
			return
		}
		out = append(out, o)
	}
	s.writeJSON(w, http.StatusOK, out)
}

// maxAPIHits caps the hits of one /api/hits answer; ask again with the
// last id for more.
const maxAPIHits = 500

func (s *Server) apiStatus(w http.ResponseWriter, r *http.Request) {
	if s.opt.Status == nil {
		s.writeJSON(w, http.StatusNotFound, map[string]string{"error": "no status here"})
		return
	}
	st, err := s.opt.Status(r.Context())
	if err != nil {
		s.writeJSON(w, http.StatusInternalServerError, map[string]string{"error": err.Error()})
		return
	}
	s.writeJSON(w, http.StatusOK, st)
}

var errBusy = errors.New("busy")

func serveFavicon(w http.ResponseWriter, r *http.Request) {
	w.Header().Set("Content-Type", "image/svg+xml")
	w.Header().Set("Cache-Control", "private, max-age=86400")
	io.WriteString(w, favicon)
}
