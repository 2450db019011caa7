package main

import (
	"context"
	"fmt"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/chromedp/cdproto/cdp"
	"github.com/chromedp/cdproto/dom"
	"github.com/chromedp/cdproto/emulation"
	"github.com/chromedp/cdproto/log"
	"github.com/chromedp/cdproto/network"
	"github.com/chromedp/cdproto/page"
	"github.com/chromedp/cdproto/runtime"
	"github.com/chromedp/chromedp"
)

// liveChromium returns Debian's chromium (or $RINGLOG_CHROMIUM).
func liveChromium() (string, bool) {
	if p := os.Getenv("RINGLOG_CHROMIUM"); p != "" {
		return p, true
	}
	for _, name := range []string{"/usr/bin/chromium", "chromium", "chromium-browser"} {
		if p, err := exec.LookPath(name); err == nil {
			return p, true
		}
	}
	return "", false
}

// browserLog collects what a tab did: its console messages, uncaught
// exceptions, browser log entries (CSP violations land there), requests
// and navigations.
type browserLog struct {
	mu          sync.Mutex
	console     []string
	requests    []string
	navigations int
}

func (b *browserLog) listen(ev any) {
	b.mu.Lock()
	defer b.mu.Unlock()
	switch e := ev.(type) {
	case *runtime.EventConsoleAPICalled:
		var args []string
		for _, a := range e.Args {
			args = append(args, string(a.Value)+a.Description)
		}
		b.console = append(b.console, fmt.Sprintf("console.%s: %s", e.Type, strings.Join(args, " ")))
	case *runtime.EventExceptionThrown:
		b.console = append(b.console, "exception: "+e.ExceptionDetails.Text)
	case *log.EventEntryAdded:
		b.console = append(b.console, fmt.Sprintf("log %s: %s %s", e.Entry.Level, e.Entry.Text, e.Entry.URL))
	case *network.EventRequestWillBeSent:
		b.requests = append(b.requests, e.Request.URL)
	case *page.EventFrameNavigated:
		if e.Frame.ParentID == "" {
			b.navigations++
		}
	}
}

func (b *browserLog) snapshot() (console, requests []string, navigations int) {
	b.mu.Lock()
	defer b.mu.Unlock()
	return append([]string(nil), b.console...), append([]string(nil), b.requests...), b.navigations
}

// openTab opens a tab of the browser with its log, network and page
// events on.
func openTab(t *testing.T, browser context.Context, scriptsOff bool) (context.Context, *browserLog) {
	t.Helper()
	ctx, cancel := chromedp.NewContext(browser)
	t.Cleanup(cancel)
	bl := &browserLog{}
	if err := chromedp.Listen(ctx, bl.listen); err != nil {
		t.Fatal(err)
	}
	steps := []chromedp.Action[chromedp.Void]{
		chromedp.Func(func(ctx context.Context, _ *chromedp.Target) error {
			if _, err := chromedp.Call(ctx, network.Enable, network.EnableParams{}); err != nil {
				return err
			}
			if _, err := chromedp.Call(ctx, log.Enable, cdp.Empty{}); err != nil {
				return err
			}
			if _, err := chromedp.Call(ctx, page.Enable, page.EnableParams{}); err != nil {
				return err
			}
			if scriptsOff {
				_, err := chromedp.Call(ctx, emulation.SetScriptExecutionDisabled, emulation.SetScriptExecutionDisabledParams{Value: true})
				return err
			}
			return nil
		}),
	}
	if err := chromedp.Do(ctx, steps...); err != nil {
		t.Fatal(err)
	}
	return ctx, bl
}

// documentHTML reads the page's HTML through the DOM domain (no script).
func documentHTML(ctx context.Context) (string, error) {
	depth := int64(-1)
	doc, err := chromedp.Call(ctx, dom.GetDocument, dom.GetDocumentParams{Depth: &depth})
	if err != nil {
		return "", err
	}
	r, err := chromedp.Call(ctx, dom.GetOuterHTML, dom.GetOuterHTMLParams{NodeID: doc.Root.NodeID})
	return r.OuterHTML, err
}

// TestBrowserLive opens the live page of a running daemon in Debian's
// chromium, headless and driven over the DevTools protocol (chromedp),
// and drops hit files into the watched folder:
//
//   - each hit's verdict appears on the open page without a reload (a
//     marker set in the page survives; no navigation happens), the plot
//     image loads;
//   - the console logs nothing (no error, no CSP violation);
//   - every request of the page goes to the daemon's own address (every
//     other host name resolves to nothing);
//   - with scripts off, the page reloads itself and shows the next hit.
//
// The time from a file being complete to its verdict on the page is
// logged (the benchmark BenchmarkLiveLatency measures it). A screenshot is
// kept in $RINGLOG_SCREENSHOT_DIR or <temp>/ringlog-report-screenshots.
// Skipped when chromium is not installed; .ci/run installs it.
func TestBrowserLive(t *testing.T) {
	bin, ok := liveChromium()
	if !ok {
		t.Skip("chromium not found: install Debian's chromium (apt-get install chromium) or set RINGLOG_CHROMIUM; .ci/run installs it")
	}
	const settle = 300 * time.Millisecond
	d := startLive(t, settle, "[live]\nlisten = \"127.0.0.1:0\"\n")
	u, err := url.Parse(d.url)
	if err != nil {
		t.Fatal(err)
	}
	opts := append(chromedp.DefaultExecAllocatorOptions[:],
		chromedp.ExecPath(bin),
		chromedp.Flag("no-sandbox", true),
		chromedp.Flag("disable-gpu", true),
		chromedp.Flag("disable-quic", true),
		chromedp.Flag("disable-component-update", true),
		chromedp.Flag("host-resolver-rules", "MAP * ~NOTFOUND, EXCLUDE 127.0.0.1"),
		chromedp.UserDataDir(t.TempDir()),
		chromedp.WindowSize(1280, 1500),
	)
	actx, cancelA := chromedp.NewExecAllocator(context.Background(), opts...)
	defer cancelA()
	browser, cancelB := chromedp.NewContext(actx)
	defer cancelB()
	if err := chromedp.Do(browser); err != nil { // start the browser
		t.Fatalf("starting chromium: %v", err)
	}

	tab, bl := openTab(t, browser, false)
	if err := chromedp.Do(tab, chromedp.Navigate(d.url), chromedp.WaitVisible(chromedp.CSS("#live"))); err != nil {
		t.Fatal(err)
	}
	if _, err := chromedp.Run(tab, chromedp.Evaluate[chromedp.Void](`window.ringlogMarker = 42`)); err != nil {
		t.Fatal(err)
	}
	for i, hit := range []struct{ name, spoil, word string }{
		{"R1_0001.csv", "", "ACCEPTED"},
		{"R1_0002.csv", "double", "REJECTED"},
	} {
		d.drop(t, hit.name, hit.spoil, uint64(100+i))
		stable := time.Now()
		pctx, cancel := context.WithTimeout(tab, waitLong)
		_, err := chromedp.Run(pctx, chromedp.Poll[bool](fmt.Sprintf(
			`(function(){var v=document.querySelector(".verdict");return !!v && v.textContent.indexOf(%q)>=0 && v.textContent.indexOf(%q)>=0;})()`,
			hit.name, hit.word), chromedp.WithPollingInterval(10*time.Millisecond), chromedp.WithPollingTimeout(waitLong)))
		cancel()
		if err != nil {
			body, _ := documentHTML(tab)
			t.Fatalf("%s: the verdict did not appear: %v\n%.2000s", hit.name, err, body)
		}
		t.Logf("%s: %s on the page %v after the file was complete (settle %v)", hit.name, hit.word, time.Since(stable).Round(time.Millisecond), settle)
	}
	marker, err := chromedp.Run(tab, chromedp.Evaluate[int](`window.ringlogMarker || 0`))
	if err != nil || marker != 42 {
		t.Errorf("the page was reloaded (marker %d, %v): updates must come without a reload", marker, err)
	}
	plotOK, err := chromedp.Run(tab, chromedp.Poll[bool](`(function(){var i=document.querySelector("img.plot");return !!i && i.complete && i.naturalWidth>100;})()`,
		chromedp.WithPollingTimeout(waitLong)))
	if err != nil || !plotOK {
		t.Errorf("the plot image did not load: %v", err)
	}
	dir := os.Getenv("RINGLOG_SCREENSHOT_DIR")
	if dir == "" {
		dir = filepath.Join(os.TempDir(), "ringlog-report-screenshots")
	}
	if err := os.MkdirAll(dir, 0o755); err == nil {
		if png, err := chromedp.Run(tab, chromedp.FullScreenshot(90)); err == nil {
			os.WriteFile(filepath.Join(dir, "live-page.png"), png, 0o644)
			t.Logf("screenshot %s", filepath.Join(dir, "live-page.png"))
		}
	}

	// Scripts off: the page refreshes itself.
	quiet, ql := openTab(t, browser, true)
	if err := chromedp.Do(quiet, chromedp.Navigate(d.url)); err != nil {
		t.Fatal(err)
	}
	_, _, before := ql.snapshot()
	d.drop(t, "R1_0003.csv", "clipped", 103)
	deadline := time.Now().Add(waitLong)
	var html string
	for time.Now().Before(deadline) {
		time.Sleep(200 * time.Millisecond)
		if _, _, n := ql.snapshot(); n == before {
			continue
		}
		if html, err = documentHTML(quiet); err == nil && strings.Contains(html, "R1_0003.csv") {
			break
		}
	}
	if !strings.Contains(html, "R1_0003.csv") || !strings.Contains(html, "REJECTED") {
		t.Errorf("with scripts off the page did not show the next hit by refreshing itself:\n%.1500s", html)
	}

	for _, b := range []*browserLog{bl, ql} {
		console, requests, _ := b.snapshot()
		if len(console) > 0 {
			t.Errorf("the console logged:\n%s", strings.Join(console, "\n"))
		}
		if len(requests) == 0 {
			t.Error("no request seen: the network log is not working")
		}
		for _, r := range requests {
			ru, err := url.Parse(r)
			if err != nil || ru.Host != u.Host {
				t.Errorf("a request left the daemon's address %s: %s", u.Host, r)
			}
		}
	}
}
