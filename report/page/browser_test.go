package page

import (
	"bytes"
	"context"
	"encoding/json"
	"image/color"
	"image/png"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"
)

// chromium returns the headless browser to test with: $RINGLOG_CHROMIUM,
// or Debian's chromium on the PATH.
func chromium() (string, bool) {
	if p := os.Getenv("RINGLOG_CHROMIUM"); p != "" {
		return p, true
	}
	for _, name := range []string{"chromium", "chromium-browser"} {
		if p, err := exec.LookPath(name); err == nil {
			return p, true
		}
	}
	return "", false
}

// screenshotDir is the folder the browser test keeps its screenshot, page
// and browser logs in: $RINGLOG_SCREENSHOT_DIR, or
// ringlog-report-screenshots in the system's temporary folder.
func screenshotDir() string {
	if d := os.Getenv("RINGLOG_SCREENSHOT_DIR"); d != "" {
		return d
	}
	return filepath.Join(os.TempDir(), "ringlog-report-screenshots")
}

// browserRun is what one headless chromium run left behind.
type browserRun struct {
	stdout, stderr string
	netLog         []byte
}

// runChromium opens the file page in a fresh headless chromium with the
// extra arguments (a mode: --screenshot=... or --dump-dom). Every host
// name resolves to nothing, and the network activity is logged to a net
// log.
func runChromium(t *testing.T, bin, page, logDir, name string, mode ...string) browserRun {
	t.Helper()
	profile := t.TempDir()
	netLog := filepath.Join(logDir, name+"-netlog.json")
	os.Remove(netLog)
	args := []string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync", "--disable-extensions",
		"--user-data-dir=" + profile, "--enable-logging=stderr", "--v=1",
		"--host-resolver-rules=MAP * ~NOTFOUND", "--log-net-log=" + netLog, "--window-size=1280,2000"}
	args = append(args, mode...)
	args = append(args, (&url.URL{Scheme: "file", Path: filepath.ToSlash(page)}).String())
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	cmd := exec.CommandContext(ctx, bin, args...)
	cmd.WaitDelay = 5 * time.Second
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	err := cmd.Run()
	os.WriteFile(filepath.Join(logDir, name+"-stderr.log"), errb.Bytes(), 0o644)
	if err != nil {
		t.Fatalf("chromium on %s: %v\n%s", page, err, tail(errb.String(), 2000))
	}
	nl, err := os.ReadFile(netLog)
	if err != nil {
		t.Fatalf("chromium wrote no net log: %v", err)
	}
	return browserRun{stdout: out.String(), stderr: errb.String(), netLog: nl}
}

func tail(s string, n int) string {
	if len(s) > n {
		return s[len(s)-n:]
	}
	return s
}

// pageRequests returns the network requests that a page started, from
// chromium's net log: the URL_REQUEST_START_JOB events whose initiator is
// a document. The browser's own background requests (update checks,
// account probes) carry the initiator "not an origin" and are left out;
// a file:// page's requests carry its opaque origin "null".
func pageRequests(t *testing.T, netLog []byte) []string {
	t.Helper()
	var log struct {
		Constants struct {
			LogEventTypes map[string]int `json:"logEventTypes"`
		} `json:"constants"`
		Events []struct {
			Type   int `json:"type"`
			Params struct {
				URL       string `json:"url"`
				Initiator string `json:"initiator"`
				NIK       string `json:"network_isolation_key"`
			} `json:"params"`
		} `json:"events"`
	}
	if err := json.Unmarshal(netLog, &log); err != nil {
		// A log cut short at exit lacks its closing brackets.
		fixed := append(bytes.TrimRight(bytes.TrimSpace(netLog), ","), []byte("]}")...)
		if err2 := json.Unmarshal(fixed, &log); err2 != nil {
			t.Fatalf("net log is not JSON: %v", err)
		}
	}
	start, ok := log.Constants.LogEventTypes["URL_REQUEST_START_JOB"]
	if !ok {
		t.Fatal("net log has no URL_REQUEST_START_JOB event type")
	}
	var out []string
	for _, e := range log.Events {
		if e.Type != start || e.Params.URL == "" { // the end of a job has no parameters
			continue
		}
		p := e.Params
		if p.Initiator != "not an origin" || strings.Contains(p.NIK, "file:") {
			out = append(out, p.URL)
		}
	}
	return out
}

// consoleLines returns chromium's log lines of console messages.
func consoleLines(stderr string) []string {
	return regexp.MustCompile(`(?m)^.*:CONSOLE[^\n]*$`).FindAllString(stderr, -1)
}

// TestBrowserDaily renders the daily page of the 200-hit test history in
// a real browser, Debian's chromium run headless, and checks what an
// engineer would get:
//
//   - the page is not blank: the screenshot has a share of non-white
//     pixels, many colours, and the verdict colours of the
//     summary bar (so the styles were applied);
//   - it made no network request: chromium runs with every host name
//     mapped to nothing and writes a net log; no request in it may come
//     from the page (see pageRequests);
//   - it logged no console message, and the DOM chromium built
//     (--dump-dom) holds the heading and every plot.
//
// A control page with an external image, a CSS url() and a console
// message runs first: the same checks must catch all three there.
//
// The screenshot (daily-report.png), the page and chromium's logs are
// kept in $RINGLOG_SCREENSHOT_DIR, or in ringlog-report-screenshots under
// the system's temporary folder. The test is skipped when chromium is not
// installed; .ci/run installs it.
func TestBrowserDaily(t *testing.T) {
	bin, ok := chromium()
	if !ok {
		t.Skip("chromium not found: install Debian's chromium (apt-get install chromium) or set RINGLOG_CHROMIUM; .ci/run installs it")
	}
	dir := screenshotDir()
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	t.Logf("screenshot, page and browser logs in %s", dir)

	// The control: the checks must see what this page does wrong.
	control := filepath.Join(dir, "control.html")
	if err := os.WriteFile(control, []byte(`<!DOCTYPE html><html><head><meta charset="utf-8"><title>control</title>
<style>body{background:url(http://control.invalid/bg.png)}</style></head>
<body><p>control</p><img src="https://control.invalid/a.png" alt=""><script>console.error("control message")</script></body></html>`), 0o644); err != nil {
		t.Fatal(err)
	}
	cr := runChromium(t, bin, control, dir, "control", "--screenshot="+filepath.Join(dir, "control.png"))
	if reqs := pageRequests(t, cr.netLog); len(reqs) < 2 {
		t.Errorf("the net log check missed the control page's requests: found %q", reqs)
	}
	if len(consoleLines(cr.stderr)) == 0 {
		t.Error("the console check missed the control page's message")
	}

	b := theBigDay(t)
	var buf bytes.Buffer
	sum, err := Daily(context.Background(), &buf, b.store, DailyOptions{Day: b.day, Expected: fixtureExpected, Generator: "ringlog browser test"})
	if err != nil {
		t.Fatal(err)
	}
	page := filepath.Join(dir, "daily-report.html")
	if err := os.WriteFile(page, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	shot := filepath.Join(dir, "daily-report.png")
	os.Remove(shot)
	run := runChromium(t, bin, page, dir, "daily", "--screenshot="+shot)
	if reqs := pageRequests(t, run.netLog); len(reqs) > 0 {
		t.Errorf("the page made network requests: %q", reqs)
	}
	if lines := consoleLines(run.stderr); len(lines) > 0 {
		t.Errorf("the page logged to the console:\n%s", strings.Join(lines, "\n"))
	}
	checkScreenshot(t, shot)

	dom := runChromium(t, bin, page, dir, "dom", "--dump-dom")
	if reqs := pageRequests(t, dom.netLog); len(reqs) > 0 {
		t.Errorf("the page made network requests: %q", reqs)
	}
	if !strings.Contains(dom.stdout, "<h1>Wednesday 12 March 2025</h1>") {
		t.Errorf("the DOM lacks the heading: %.300s", dom.stdout)
	}
	if got, want := strings.Count(dom.stdout, "<svg"), strings.Count(buf.String(), "<svg"); got != want || want < 6+sum.Plotted {
		t.Errorf("the DOM has %d plots, the page %d", got, want)
	}
	if strings.Contains(dom.stdout, "<script") {
		t.Error("the DOM has a script")
	}
}

// checkScreenshot decodes the screenshot and checks that it shows a page:
// at least 4 % of the pixels are not near-white (a blank page has none;
// this page without its styles and plots about 6 %), at least 40 colours
// (at 4 bits per channel), and the accepted, flagged and rejected colours
// of the summary bar: these show that the styles were applied.
func checkScreenshot(t *testing.T, path string) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatalf("no screenshot: %v", err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("screenshot %s: %v", path, err)
	}
	bounds := img.Bounds()
	if bounds.Dx() < 1000 || bounds.Dy() < 1500 {
		t.Errorf("screenshot is %v, want the 1280 x 2000 window", bounds.Size())
	}
	verdict := map[string]color.RGBA{"accepted": {0x3f, 0x7d, 0x4e, 0xff}, "flagged": {0xb7, 0x79, 0x1f, 0xff}, "rejected": {0xa2, 0x3b, 0x3b, 0xff}}
	found := map[string]int{}
	colours := map[[3]uint8]bool{}
	ink := 0
	for y := bounds.Min.Y; y < bounds.Max.Y; y++ {
		for x := bounds.Min.X; x < bounds.Max.X; x++ {
			c := color.RGBAModel.Convert(img.At(x, y)).(color.RGBA)
			if c.R < 235 || c.G < 235 || c.B < 235 {
				ink++
			}
			colours[[3]uint8{c.R >> 4, c.G >> 4, c.B >> 4}] = true
			for k, v := range verdict {
				if near(c, v, 6) {
					found[k]++
				}
			}
		}
	}
	share := float64(ink) / float64(bounds.Dx()*bounds.Dy())
	t.Logf("screenshot: %.1f %% of pixels not near-white, %d colours", 100*share, len(colours))
	if share < 0.04 {
		t.Errorf("the page looks blank: %.1f %% of pixels not near-white", 100*share)
	}
	if len(colours) < 40 {
		t.Errorf("only %d colours in the screenshot", len(colours))
	}
	for k := range verdict {
		if found[k] < 50 {
			t.Errorf("the %s colour shows in %d pixels: the styles were not applied", k, found[k])
		}
	}
}

func near(a, b color.RGBA, tol int) bool {
	d := func(x, y uint8) bool { return int(x)-int(y) <= tol && int(y)-int(x) <= tol }
	return d(a.R, b.R) && d(a.G, b.G) && d(a.B, b.B)
}
