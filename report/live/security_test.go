package live

import (
	"context"
	"errors"
	"fmt"
	"io"
	"net"
	"net/http"
	"net/url"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"
)

// paths are the endpoints the rules are checked on.
var paths = []string{"/", "/events", "/api/last", "/api/hits?since=0", "/api/status", "/daily", "/reports/a.html", "/nothing"}

// TestReadOnly: every method but GET and HEAD is refused with 405 and an
// Allow header, on every path, and changes nothing.
func TestReadOnly(t *testing.T) {
	f := newFixture(t)
	f.record(t, hitSpec{name: "ro.csv", prototype: "bracket", revision: "S1", seed: 1})
	s := f.server(t, Options{})
	for _, p := range append(paths, "/login?key=x") {
		for _, m := range []string{"POST", "PUT", "DELETE", "PATCH", "OPTIONS", "TRACE", "CONNECT", "PROPFIND"} {
			w := get(t, s.Handler(), m, p)
			if w.Code != http.StatusMethodNotAllowed || w.Header().Get("Allow") != "GET, HEAD" {
				t.Errorf("%s %s = %d (Allow %q), want 405 with Allow: GET, HEAD", m, p, w.Code, w.Header().Get("Allow"))
			}
		}
	}
	if w := get(t, s.Handler(), "HEAD", "/"); w.Code != 200 {
		t.Errorf("HEAD / = %d", w.Code)
	}
	st, err := f.store.Status(context.Background())
	if err != nil || st.Hits != 1 {
		t.Errorf("history changed: %+v %v", st, err)
	}
}

// TestHeaders: every answer carries the CSP that forbids every external
// load and allows the page's inline script and style by hash only, and
// the hardening headers.
func TestHeaders(t *testing.T) {
	f := newFixture(t)
	f.record(t, hitSpec{name: "h.csv", prototype: "bracket", revision: "S1", seed: 2})
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, "a.html"), []byte("<p>a</p>"), 0o644)
	s := f.server(t, Options{ReportFolder: dir})
	page := get(t, s.Handler(), "GET", "/")
	for _, p := range append(paths, "/plot/1-1.svg", "/login?key=x") {
		if p == "/events" {
			continue // a stream; checked over a real connection in TestLimits
		}
		w := get(t, s.Handler(), "GET", p)
		h := w.Header()
		csp := h.Get("Content-Security-Policy")
		for _, want := range []string{"default-src 'none'", "frame-ancestors 'none'", "base-uri 'none'", "form-action 'none'"} {
			if !strings.Contains(csp, want) {
				t.Errorf("%s: CSP %q lacks %q", p, csp, want)
			}
		}
		if m := regexp.MustCompile(`script-src ([^;]*)`).FindStringSubmatch(csp); m == nil || strings.Contains(m[1], "unsafe") || strings.Contains(m[1], "http") || strings.Contains(m[1], "*") {
			t.Errorf("%s: script-src in %q", p, csp)
		}
		if strings.Contains(csp, "http:") || strings.Contains(csp, "https:") || strings.Contains(csp, "*") {
			t.Errorf("%s: CSP names other origins: %q", p, csp)
		}
		for k, v := range map[string]string{"X-Content-Type-Options": "nosniff", "X-Frame-Options": "DENY", "Referrer-Policy": "no-referrer"} {
			if h.Get(k) != v {
				t.Errorf("%s: %s = %q, want %q", p, k, h.Get(k), v)
			}
		}
	}
	// The hashes in the page's CSP are those of its inline script and
	// style, byte for byte.
	body := page.Body.String()
	csp := page.Header().Get("Content-Security-Policy")
	js := between(body, "<script>", "</script>")
	style := between(body, "<style>", "</style>")
	if !strings.Contains(csp, "script-src "+hashOf(js)+";") || !strings.Contains(csp, "style-src "+hashOf(style)+";") {
		t.Errorf("CSP %q does not allow the page's inline script and style by hash", csp)
	}
	if !strings.Contains(body, `<noscript><meta http-equiv="refresh" content="3"></noscript>`) {
		t.Error("the page does not refresh itself without scripts")
	}
	if strings.Contains(body, " style=") {
		t.Error("the page has a style attribute, which its CSP blocks")
	}
	if regexp.MustCompile(`(src|href)="(https?:)?//`).MatchString(body) {
		t.Error("the page refers to another origin")
	}
}

func between(s, a, b string) string {
	i := strings.Index(s, a)
	j := strings.Index(s, b)
	if i < 0 || j < i {
		return ""
	}
	return s[i+len(a) : j]
}

// TestCheckListen: an address other than loopback needs a token, and
// the refusal names the setting; loopback needs none; a short token is
// refused.
func TestCheckListen(t *testing.T) {
	for _, a := range []string{"0.0.0.0:8620", "192.0.2.10:8620", "[::]:8620", "[2001:db8::1]:8620"} {
		addr, err := net.ResolveTCPAddr("tcp", a)
		if err != nil {
			t.Fatal(err)
		}
		err = CheckListen(addr, "")
		if err == nil || !strings.Contains(err.Error(), "[live] token") || !strings.Contains(err.Error(), "RINGLOG_LIVE_TOKEN") {
			t.Errorf("%s without a token: %v", a, err)
		}
		if err := CheckListen(addr, strings.Repeat("k", MinTokenLength)); err != nil {
			t.Errorf("%s with a token: %v", a, err)
		}
	}
	for _, a := range []string{"127.0.0.1:8620", "127.0.0.2:1", "[::1]:8620"} {
		addr, _ := net.ResolveTCPAddr("tcp", a)
		if err := CheckListen(addr, ""); err != nil {
			t.Errorf("%s: %v", a, err)
		}
	}
	addr, _ := net.ResolveTCPAddr("tcp", "0.0.0.0:1")
	if err := CheckListen(addr, "short"); err == nil {
		t.Error("a 5-character token was accepted")
	}
	if _, err := New(newFixture(t).store, Options{Token: "short"}); err == nil {
		t.Error("New accepted a 5-character token")
	}
}

// TestToken: with a token, a request needs it as a bearer token or the
// cookie of the one-time link; the link works once.
func TestToken(t *testing.T) {
	f := newFixture(t)
	f.record(t, hitSpec{name: "tok.csv", prototype: "bracket", revision: "S1", seed: 4})
	const token = "a-token-for-the-bay-tablet"
	s := f.server(t, Options{Token: token})
	h := s.Handler()
	remote := "Host"
	for _, p := range paths {
		if w := get(t, h, "GET", p, remote, "192.0.2.5:8620"); w.Code != http.StatusUnauthorized {
			t.Errorf("GET %s without the token = %d, want 401", p, w.Code)
		}
		if w := get(t, h, "GET", p, "Authorization", "Bearer "+token+"x"); w.Code != http.StatusUnauthorized {
			t.Errorf("GET %s with a wrong token = %d, want 401", p, w.Code)
		}
	}
	if w := get(t, h, "GET", "/api/last", "Authorization", "Bearer "+token, remote, "192.0.2.5:8620"); w.Code != 200 {
		t.Errorf("with the bearer token: %d", w.Code)
	}
	if w := get(t, h, "GET", "/api/last", "Cookie", cookieName+"="+token); w.Code != http.StatusUnauthorized {
		t.Errorf("the token itself as cookie value: %d, want 401", w.Code)
	}
	link := s.OneTimeLink()
	if !strings.HasPrefix(link, LoginPath+"?key=") {
		t.Fatalf("one-time link %q", link)
	}
	if w := get(t, h, "GET", LoginPath+"?key=wrong"); w.Code != http.StatusForbidden {
		t.Errorf("a wrong key: %d", w.Code)
	}
	w := get(t, h, "GET", link)
	if w.Code != http.StatusSeeOther {
		t.Fatalf("the one-time link: %d %s", w.Code, w.Body)
	}
	c := w.Result().Cookies()
	if len(c) != 1 || c[0].Name != cookieName || !c[0].HttpOnly || c[0].SameSite != http.SameSiteStrictMode || strings.Contains(c[0].Value, token) {
		t.Fatalf("cookie %+v", c)
	}
	if w := get(t, h, "GET", "/", "Cookie", c[0].Name+"="+c[0].Value); w.Code != 200 {
		t.Errorf("with the cookie: %d", w.Code)
	}
	if w := get(t, h, "GET", link); w.Code != http.StatusForbidden {
		t.Errorf("the one-time link used twice: %d, want 403", w.Code)
	}
	if s.OneTimeLink() != "" {
		t.Error("the used link is still offered")
	}
}

// TestHostCheck: without a token, only a loopback Host is answered (a
// page of another site that rebinds its name to 127.0.0.1 gets nothing).
func TestHostCheck(t *testing.T) {
	f := newFixture(t)
	s := f.server(t, Options{})
	for _, host := range []string{"attacker.example", "attacker.example:8620", "192.0.2.1:8620"} {
		if w := get(t, s.Handler(), "GET", "/api/status", "Host", host); w.Code != http.StatusMisdirectedRequest {
			t.Errorf("Host %s: %d, want 421", host, w.Code)
		}
	}
	for _, host := range []string{"127.0.0.1:8620", "localhost:8620", "[::1]:8620", "localhost"} {
		if w := get(t, s.Handler(), "GET", "/api/status", "Host", host); w.Code != 200 {
			t.Errorf("Host %s: %d, want 200", host, w.Code)
		}
	}
}

// TestRateLimit: a client beyond its burst gets 429 until its bucket
// refills; another client is not affected.
func TestRateLimit(t *testing.T) {
	f := newFixture(t)
	now := time.Unix(1_700_000_000, 0)
	s := f.server(t, Options{Limits: Limits{Rate: 2, Burst: 5}, Now: func() time.Time { return now }})
	h := s.Handler()
	for i := range 5 {
		if w := get(t, h, "GET", "/api/status"); w.Code != 200 {
			t.Fatalf("request %d: %d", i+1, w.Code)
		}
	}
	if w := get(t, h, "GET", "/api/status"); w.Code != http.StatusTooManyRequests || w.Header().Get("Retry-After") == "" {
		t.Errorf("6th request at once: %d, want 429 with Retry-After", w.Code)
	}
	r, _ := http.NewRequest("GET", "/api/status", nil)
	r.Host, r.RemoteAddr = "127.0.0.1", "127.0.0.9:1"
	if w := get(t, h, "GET", "/api/status", "Host", "127.0.0.1"); w.Code != http.StatusTooManyRequests {
		t.Errorf("same client: %d", w.Code)
	}
	now = now.Add(time.Second) // 2 tokens back
	if w := get(t, h, "GET", "/api/status"); w.Code != 200 {
		t.Errorf("after a second: %d", w.Code)
	}
}

// TestLimits: over a real connection, event streams beyond MaxStreams get
// 503, connections beyond MaxConns are closed at once, and stopping the
// server ends the streams.
func TestLimits(t *testing.T) {
	f := newFixture(t)
	f.record(t, hitSpec{name: "lim.csv", prototype: "bracket", revision: "S1", seed: 5})
	s := f.server(t, Options{Limits: Limits{MaxStreams: 2, MaxConns: 3}})
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- s.Serve(ctx, ln) }()
	base := "http://" + ln.Addr().String()
	client := &http.Client{Transport: &http.Transport{DisableKeepAlives: true}}
	var streams []*http.Response
	for range 2 {
		r, err := client.Get(base + "/events")
		if err != nil || r.StatusCode != 200 {
			t.Fatalf("stream: %v %v", r, err)
		}
		streams = append(streams, r)
	}
	r, err := client.Get(base + "/events")
	if err != nil || r.StatusCode != http.StatusServiceUnavailable {
		t.Errorf("third stream: %v %v, want 503", r, err)
	}
	if r != nil {
		r.Body.Close()
	}
	// Two connections hold streams; one more is allowed, a fourth is
	// closed at once.
	c3, err := net.Dial("tcp", ln.Addr().String())
	if err != nil {
		t.Fatal(err)
	}
	defer c3.Close()
	time.Sleep(100 * time.Millisecond)
	c4, err := net.Dial("tcp", ln.Addr().String())
	if err != nil {
		t.Fatal(err)
	}
	c4.SetReadDeadline(time.Now().Add(5 * time.Second))
	io.WriteString(c4, "GET /api/status HTTP/1.1\r\nHost: 127.0.0.1\r\n\r\n")
	if b, err := io.ReadAll(c4); len(b) > 0 || isTimeout(err) {
		t.Errorf("fourth connection: read %q, %v; want it closed unanswered", b, err)
	}
	c4.Close()
	c3.Close()
	cancel()
	select {
	case err := <-done:
		if err != nil {
			t.Errorf("Serve: %v", err)
		}
	case <-time.After(10 * time.Second):
		t.Fatal("Serve did not stop with open streams")
	}
	for _, st := range streams {
		st.Body.Close()
	}
}

// TestNoTraversal: only files directly inside the report folder are
// served; "..", encoded slashes, absolute paths and symbolic links out of
// the folder get 404, and so do plots of hits that do not exist.
func TestNoTraversal(t *testing.T) {
	f := newFixture(t)
	base := t.TempDir()
	reports := filepath.Join(base, "reports")
	os.Mkdir(reports, 0o755)
	os.WriteFile(filepath.Join(reports, "ringlog-daily-2026-01-02.html"), []byte("<p>day</p>"), 0o644)
	os.WriteFile(filepath.Join(base, "secret.html"), []byte("secret"), 0o644)
	os.Mkdir(filepath.Join(reports, "sub"), 0o755)
	os.WriteFile(filepath.Join(reports, "sub", "x.html"), []byte("sub"), 0o644)
	linked := os.Symlink(filepath.Join(base, "secret.html"), filepath.Join(reports, "link.html")) == nil
	s := f.server(t, Options{ReportFolder: reports})
	h := s.Handler()
	if w := get(t, h, "GET", "/reports/ringlog-daily-2026-01-02.html"); w.Code != 200 || w.Body.String() != "<p>day</p>" {
		t.Errorf("a report file: %d %q", w.Code, w.Body)
	}
	bad := []string{"/reports/../secret.html", "/reports/..%2fsecret.html", "/reports/%2e%2e%2fsecret.html",
		"/reports/sub/x.html", "/reports/sub%2fx.html", "/reports/" + url.PathEscape(filepath.Join(base, "secret.html")),
		"/reports/.hidden.html", "/reports/x.txt", "/plot/..%2f..%2fetc%2fpasswd", "/plot/1-1.svg", "/plot/abc.svg",
		"/../secret.html", "/history.db"}
	if linked {
		bad = append(bad, "/reports/link.html")
	}
	for _, p := range bad {
		w := get(t, h, "GET", p)
		if w.Code/100 == 3 { // the mux cleans the path: follow once
			w = get(t, h, "GET", w.Header().Get("Location"))
		}
		if w.Code == 200 || strings.Contains(w.Body.String(), "secret") || strings.Contains(w.Body.String(), "sub") && p != "/reports/sub/x.html" {
			t.Errorf("GET %s = %d %q", p, w.Code, w.Body)
		}
	}
}

func isTimeout(err error) bool {
	var ne net.Error
	return errors.As(err, &ne) && ne.Timeout()
}

// TestSlowClient: a client that sends its headers too slowly (or never
// ends them) is cut off after HeaderTimeout, and headers beyond 16 KB are
// refused: a few idle sockets cannot hold the daemon's connections.
func TestSlowClient(t *testing.T) {
	f := newFixture(t)
	s := f.server(t, Options{Limits: Limits{HeaderTimeout: 300 * time.Millisecond}})
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- s.Serve(ctx, ln) }()
	defer func() { cancel(); <-done }()
	c, err := net.Dial("tcp", ln.Addr().String())
	if err != nil {
		t.Fatal(err)
	}
	defer c.Close()
	io.WriteString(c, "GET /api/status HTTP/1.1\r\nHost: 127.0.0.1\r\nX-Slow: ")
	start := time.Now()
	c.SetReadDeadline(time.Now().Add(10 * time.Second))
	b, err := io.ReadAll(c)
	if isTimeout(err) || time.Since(start) > 3*time.Second {
		t.Errorf("a client that never ends its headers was kept %v (%v)", time.Since(start), err)
	}
	if strings.Contains(string(b), "200 OK") {
		t.Errorf("the unfinished request was answered: %q", b)
	}
	c2, err := net.Dial("tcp", ln.Addr().String())
	if err != nil {
		t.Fatal(err)
	}
	defer c2.Close()
	fmt.Fprintf(c2, "GET /api/status HTTP/1.1\r\nHost: 127.0.0.1\r\nX-Big: %s\r\n\r\n", strings.Repeat("a", 40<<10))
	c2.SetReadDeadline(time.Now().Add(10 * time.Second))
	b, _ = io.ReadAll(c2)
	if !strings.Contains(string(b), "431") {
		t.Errorf("40 KB of headers: %.100q, want 431", b)
	}
}
