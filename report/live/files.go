package live

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"html"
	"io"
	"io/fs"
	"net/http"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline/read"
	"github.com/ringlog/ringlog/report/page"
)

// maxPlotFile is the largest recorded file the plot reads again.
const maxPlotFile = 256 << 20

// plotCache keeps the last plots drawn, by hit and result; one plot is
// drawn at a time.
type plotCache struct {
	draw  sync.Mutex
	mu    sync.Mutex
	max   int
	keys  []string
	plots map[string][]byte
}

func newPlotCache(max int) *plotCache {
	return &plotCache{max: max, plots: map[string][]byte{}}
}

func (c *plotCache) get(k string) ([]byte, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	b, ok := c.plots[k]
	return b, ok
}

func (c *plotCache) put(k string, b []byte) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if _, ok := c.plots[k]; ok {
		return
	}
	if len(c.keys) >= c.max {
		delete(c.plots, c.keys[0])
		c.keys = c.keys[1:]
	}
	c.keys = append(c.keys, k)
	c.plots[k] = b
}

var plotName = regexp.MustCompile(`^([0-9]{1,18})-([0-9]{1,18})\.svg$`)

// plot serves the decay and spectrum of one hit of the history, drawn by
// report/page from the hit's file (read again, its content checked
// against the recorded SHA-256).
func (s *Server) plot(w http.ResponseWriter, r *http.Request) {
	m := plotName.FindStringSubmatch(r.PathValue("name"))
	if m == nil {
		writeError(w, http.StatusNotFound, "not found")
		return
	}
	id, _ := strconv.ParseInt(m[1], 10, 64)
	rid, _ := strconv.ParseInt(m[2], 10, 64)
	key := m[1] + "-" + m[2]
	b, ok := s.plots.get(key)
	if !ok {
		hits, err := s.store.HitsAfter(r.Context(), id-1, 1)
		if err != nil {
			writeError(w, http.StatusInternalServerError, err.Error())
			return
		}
		if len(hits) == 0 || hits[0].ID != id || hits[0].ResultID != rid {
			writeError(w, http.StatusNotFound, "no such hit or result in the history")
			return
		}
		s.plots.draw.Lock()
		if b, ok = s.plots.get(key); !ok {
			b = s.drawPlot(hits[0])
			s.plots.put(key, b)
		}
		s.plots.draw.Unlock()
	}
	h := w.Header()
	h.Set("Content-Security-Policy", reportCSP)
	h.Set("Content-Type", "image/svg+xml")
	h.Set("Cache-Control", "private, max-age=3600")
	w.Write(b)
}

// drawPlot draws the plot of h, or an image that says why it cannot.
func (s *Server) drawPlot(h db.Hit) []byte {
	data, path, problem := readRecorded(h)
	if problem != "" {
		return messageSVG(problem)
	}
	var ro read.Options
	if s.opt.Read != nil {
		ro = s.opt.Read(h)
	}
	rec, err := read.Data(path, data, ro)
	if err != nil {
		return messageSVG("The file cannot be read now: " + err.Error())
	}
	var buf bytes.Buffer
	if err := page.WriteHitSVG(&buf, rec, h.Result); err != nil {
		return messageSVG("The plot cannot be drawn: " + err.Error())
	}
	return buf.Bytes()
}

// readRecorded reads the hit's file and checks that it holds the recorded
// content.
func readRecorded(h db.Hit) (data []byte, path, problem string) {
	f, err := os.Open(h.Path)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, "", "The file is no longer at " + h.Path + ", so its decay cannot be drawn."
	}
	if err != nil {
		return nil, "", "The file cannot be read now: " + err.Error()
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil || !st.Mode().IsRegular() || st.Size() > maxPlotFile {
		return nil, "", "The file at " + h.Path + " is no longer a readable recording of a sensible size."
	}
	data, err = io.ReadAll(io.LimitReader(f, maxPlotFile+1))
	if err != nil {
		return nil, "", "The file cannot be read now: " + err.Error()
	}
	sum := sha256.Sum256(data)
	if !strings.EqualFold(hex.EncodeToString(sum[:]), h.SHA256) {
		return nil, "", "The file at " + h.Path + " has changed since it was recorded, so its decay is not drawn."
	}
	return data, h.Path, ""
}

// messageSVG is a small image holding a message instead of a plot.
func messageSVG(msg string) []byte {
	var b bytes.Buffer
	b.WriteString(`<svg xmlns="http://www.w3.org/2000/svg" width="510" height="120" viewBox="0 0 510 120">`)
	b.WriteString(`<rect width="510" height="120" fill="#fff" stroke="#bbb"/>`)
	y := 30
	for len(msg) > 0 && y < 120 {
		line := msg
		if len(line) > 70 {
			cut := strings.LastIndex(line[:70], " ")
			if cut <= 0 {
				cut = 70
			}
			line = line[:cut]
		}
		msg = strings.TrimSpace(msg[len(line):])
		fmt.Fprintf(&b, `<text x="12" y="%d" font-family="sans-serif" font-size="15" fill="#111">%s</text>`, y, html.EscapeString(line))
		y += 22
	}
	b.WriteString(`</svg>`)
	return b.Bytes()
}

// reportSlot takes one of the report slots, or says the server is busy.
func (s *Server) reportSlot(w http.ResponseWriter) (release func(), ok bool) {
	select {
	case s.reports <- struct{}{}:
		return func() { <-s.reports }, true
	default:
		w.Header().Set("Retry-After", "5")
		writeError(w, http.StatusServiceUnavailable, "another report is being drawn; try again in a few seconds")
		return nil, false
	}
}

// daily draws the daily report of a day (default today) from the history.
func (s *Server) daily(w http.ResponseWriter, r *http.Request) {
	day := s.opt.Now()
	if v := r.URL.Query().Get("day"); v != "" {
		t, err := time.ParseInLocation("2006-01-02", v, day.Location())
		if err != nil {
			writeError(w, http.StatusBadRequest, fmt.Sprintf("day=%q: write the day as YYYY-MM-DD", v))
			return
		}
		day = t
	}
	release, ok := s.reportSlot(w)
	if !ok {
		return
	}
	defer release()
	ctx, cancel := context.WithTimeout(r.Context(), 2*s.opt.Limits.RequestTimeout)
	defer cancel()
	opt := page.DailyOptions{Day: day, Expected: s.opt.Expected, Read: s.opt.Read, Generator: s.opt.Generator, Database: s.opt.Database}
	var buf bytes.Buffer
	if _, err := page.Daily(ctx, &buf, s.store, opt); err != nil {
		writeError(w, http.StatusInternalServerError, "the daily report could not be drawn: "+err.Error())
		return
	}
	serveReport(w, "text/html; charset=utf-8", buf.Bytes())
}

// compare draws the comparison of two revisions of a prototype.
func (s *Server) compare(w http.ResponseWriter, r *http.Request) {
	q := r.URL.Query()
	proto, a, b := q.Get("prototype"), q.Get("a"), q.Get("b")
	if a == b {
		writeError(w, http.StatusBadRequest, "name two different revisions: compare?prototype=P&a=R1&b=R2")
		return
	}
	release, ok := s.reportSlot(w)
	if !ok {
		return
	}
	defer release()
	ctx, cancel := context.WithTimeout(r.Context(), 2*s.opt.Limits.RequestTimeout)
	defer cancel()
	opt := page.CompareOptions{Prototype: proto, RevisionA: a, RevisionB: b, Generator: s.opt.Generator, Database: s.opt.Database}
	if s.opt.Expected != nil {
		opt.Expected = s.opt.Expected(proto)
	}
	var buf bytes.Buffer
	if _, err := page.Compare(ctx, &buf, s.store, opt); err != nil {
		code := http.StatusInternalServerError
		if errors.Is(err, page.ErrNoHits) {
			code = http.StatusNotFound
		}
		writeError(w, code, "the revision comparison could not be drawn: "+err.Error())
		return
	}
	serveReport(w, "text/html; charset=utf-8", buf.Bytes())
}

func serveReport(w http.ResponseWriter, ctype string, b []byte) {
	w.Header().Set("Content-Security-Policy", reportCSP)
	w.Header().Set("Content-Type", ctype)
	w.Write(b)
}

// reportFileName is what a file of the report folder may be called.
var reportFileName = regexp.MustCompile(`^[A-Za-z0-9][A-Za-z0-9._-]{0,200}\.(html|svg)$`)

// maxReportFile is the largest report file served.
const maxReportFile = 64 << 20

// reportFile serves a file directly inside the report folder. The name is
// checked, and the file is opened through os.Root, which refuses ".." and
// symbolic links that lead out of the folder.
func (s *Server) reportFile(w http.ResponseWriter, r *http.Request) {
	name := r.PathValue("name")
	if s.opt.ReportFolder == "" || !reportFileName.MatchString(name) || strings.Contains(name, "..") {
		writeError(w, http.StatusNotFound, "not found")
		return
	}
	root, err := os.OpenRoot(s.opt.ReportFolder)
	if err != nil {
		writeError(w, http.StatusNotFound, "not found")
		return
	}
	defer root.Close()
	f, err := root.Open(name)
	if err != nil {
		writeError(w, http.StatusNotFound, "not found")
		return
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil || !st.Mode().IsRegular() || st.Size() > maxReportFile {
		writeError(w, http.StatusNotFound, "not found")
		return
	}
	ctype := "text/html; charset=utf-8"
	if filepath.Ext(name) == ".svg" {
		ctype = "image/svg+xml"
	}
	w.Header().Set("Content-Security-Policy", reportCSP)
	w.Header().Set("Content-Type", ctype)
	http.ServeContent(w, r, "", st.ModTime(), f)
}
