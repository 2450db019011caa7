package watch

import (
	"container/heap"
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"time"

	"github.com/fsnotify/fsnotify"
)

// candidate states.
const (
	settling = iota // stat-checked until unchanged for the settle period
	retrying        // settled, but the open failed; waiting to retry
	waiting         // complete; in the queue for the consumer
	gone            // no longer tracked
)

// cand is a file found but not yet handed out.
type cand struct {
	path       string
	folder     int
	seq        uint64 // discovery order
	size       int64
	mtime      time.Time
	lastChange time.Time // when (size, mtime) was last seen to change, or first seen
	lastEvent  time.Time // last fsnotify event naming the file
	state      int
	attempts   int       // failed opens since the last change
	openErr    error     // set when handed out as failed
	gen        uint64    // generation of the live deadline entry
	qgen       uint64    // generation of the live queue entry
	checkedAt  time.Time // last time (size, mtime) was confirmed
}

// deadline is an entry of the timer heap: check c at due. Entries whose gen
// no longer matches their candidate are stale and skipped.
type deadline struct {
	due time.Time
	seq uint64
	c   *cand
	gen uint64
}

type deadlines []deadline

func (h deadlines) Len() int { return len(h) }
func (h deadlines) Less(i, j int) bool {
	if !h[i].due.Equal(h[j].due) {
		return h[i].due.Before(h[j].due)
	}
	return h[i].seq < h[j].seq
}
func (h deadlines) Swap(i, j int) { h[i], h[j] = h[j], h[i] }
func (h *deadlines) Push(x any)   { *h = append(*h, x.(deadline)) }
func (h *deadlines) Pop() any {
	old := *h
	x := old[len(old)-1]
	*h = old[:len(old)-1]
	return x
}

// queued is an entry of the hand-out queue.
type queued struct {
	c    *cand
	qgen uint64
}

// runState is the state owned by the goroutine in Run.
type runState struct {
	cands   map[string]*cand
	timers  deadlines
	queue   []queued
	qhead   int
	nWait   int
	seq     uint64
	fsw     *fsnotify.Watcher
	watched map[string]bool // directories under fsnotify watch
	noWatch map[string]bool // directories fsnotify refused (warned once; scans cover them)
}

// Run watches the folders and sends complete, new files to out, in the
// order they became complete (discovery order among files that settled
// together). It blocks until ctx is done and then returns nil; files not yet
// taken from out are dropped (a later run finds them again, since Seen does
// not know them). Run never closes out. Only one Run may be active at a time.
//
// When out is full, Run keeps watching and tracking and waits; its memory
// is bounded by the number of files in the folders.
func (w *Watcher) Run(ctx context.Context, out chan<- Ready) error {
	if out == nil {
		return errNoOutput
	}
	if !w.running.CompareAndSwap(false, true) {
		return errors.New("watch: Run is already running")
	}
	defer w.running.Store(false)
	if ctx.Err() != nil {
		return nil
	}
	w.runState = runState{cands: make(map[string]*cand), watched: make(map[string]bool), noWatch: make(map[string]bool)}
	defer func() {
		w.runState = runState{}
		w.publish()
	}()

	var events <-chan fsnotify.Event
	var errs <-chan error
	if w.wantEvents() {
		fsw, err := fsnotify.NewWatcher()
		if err != nil {
			w.log.Warn().Err(err).Msg("file notifications unavailable; finding files by periodic scans only")
		} else {
			w.fsw = fsw
			defer fsw.Close()
			events, errs = fsw.Events, fsw.Errors
		}
	}
	w.scan()
	ticker := time.NewTicker(w.scanEvery)
	defer ticker.Stop()
	timer := time.NewTimer(time.Hour)
	defer timer.Stop()
	for {
		now := time.Now()
		w.processDue(now)
		head := w.head(now)
		var send chan<- Ready
		var r Ready
		if head != nil {
			send = out
			r = Ready{Path: head.path, Folder: head.folder, Size: head.size, MTime: head.mtime, Err: head.openErr}
		}
		w.publish()
		if len(w.timers) > 0 {
			timer.Reset(time.Until(w.timers[0].due))
		} else {
			timer.Stop()
		}
		select {
		case <-ctx.Done():
			return nil
		case ev, ok := <-events:
			if !ok {
				events = nil
				continue
			}
			w.handleEvent(ev, time.Now())
		case err, ok := <-errs:
			if !ok {
				errs = nil
				continue
			}
			w.handleWatchError(err)
		case <-w.rescanCh:
			w.scan()
		case <-ticker.C:
			w.scan()
		case <-timer.C:
		case send <- r:
			w.handedOut(head)
		}
	}
}

// wantEvents reports whether any folder uses fsnotify.
func (w *Watcher) wantEvents() bool {
	for _, f := range w.folders {
		if !f.poll {
			return true
		}
	}
	return false
}

// publish copies the state counts into the stats.
func (w *Watcher) publish() {
	w.doneMu.Lock()
	nDone := len(w.done)
	w.doneMu.Unlock()
	w.count(func(s *Stats) {
		s.Tracked = len(w.cands)
		s.Waiting = w.nWait
		s.Remembered = nDone
		s.WatchedDirs = len(w.watched)
	})
}

// handleWatchError counts a watcher error and scans, since events may have
// been lost.
func (w *Watcher) handleWatchError(err error) {
	if errors.Is(err, fsnotify.ErrEventOverflow) {
		w.count(func(s *Stats) { s.Overflows++ })
		w.log.Warn().Msg("file notification queue overflowed; rescanning")
	} else {
		w.count(func(s *Stats) { s.WatchErrors++ })
		w.log.Warn().Err(err).Msg("file notification error; rescanning")
	}
	w.Rescan()
}

// setState moves c to state s, keeping the waiting count.
func (w *Watcher) setState(c *cand, s int) {
	if c.state == waiting {
		w.nWait--
	}
	if s == waiting {
		w.nWait++
	}
	c.state = s
}

// schedule sets c's next check to due.
func (w *Watcher) schedule(c *cand, due time.Time) {
	c.gen++
	heap.Push(&w.timers, deadline{due: due, seq: c.seq, c: c, gen: c.gen})
	if len(w.timers) > 2*len(w.cands)+64 {
		// Drop stale entries so the heap stays bounded by the candidates.
		live := w.timers[:0]
		for _, d := range w.timers {
			if d.gen == d.c.gen && d.c.state != gone && w.cands[d.c.path] == d.c {
				live = append(live, d)
			}
		}
		clear(w.timers[len(live):])
		w.timers = live
		heap.Init(&w.timers)
	}
}

// drop stops tracking c; vanished counts it as forgotten.
func (w *Watcher) drop(c *cand, vanished bool) {
	if w.cands[c.path] == c {
		delete(w.cands, c.path)
	}
	w.setState(c, gone)
	c.gen++
	if vanished {
		w.count(func(s *Stats) { s.Forgotten++ })
		w.log.Debug().Str("file", c.path).Msg("file vanished before it was handed out; forgotten")
	}
}

// processDue checks every candidate whose deadline has passed.
func (w *Watcher) processDue(now time.Time) {
	for len(w.timers) > 0 && !w.timers[0].due.After(now) {
		d := heap.Pop(&w.timers).(deadline)
		if d.gen != d.c.gen || d.c.state == gone || d.c.state == waiting {
			continue
		}
		w.check(d.c, now)
	}
}

// later returns the later of two times.
func later(a, b time.Time) time.Time {
	if a.After(b) {
		return a
	}
	return b
}

// Results of restat.
const (
	statOK          = iota // c refreshed (and put back to settling if it changed)
	statGone               // c vanished or is no longer a regular file; dropped
	statUnreachable        // stat failed for another reason; c kept
)

// restat refreshes c from the file system. A change resets the settle
// clock and the open attempts and puts c back to settling.
func (w *Watcher) restat(c *cand, now time.Time) int {
	fi, err := os.Stat(c.path)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			w.drop(c, true)
			return statGone
		}
		// Share offline, access denied on a parent...: keep it, and count
		// the time as unsettled.
		w.log.Debug().Err(err).Str("file", c.path).Msg("cannot stat file; will retry")
		c.lastChange = now
		if c.state != settling {
			w.setState(c, settling)
		}
		return statUnreachable
	}
	if !fi.Mode().IsRegular() {
		w.drop(c, false)
		return statGone
	}
	if fi.Size() != c.size || !fi.ModTime().Equal(c.mtime) {
		c.size, c.mtime = fi.Size(), fi.ModTime()
		c.lastChange = now
		c.attempts = 0
		c.openErr = nil
		if c.state != settling {
			w.setState(c, settling)
		}
	}
	c.checkedAt = now
	return statOK
}

// check is run at a candidate's deadline: it stats the file and, once it
// has been unchanged (and event-free) for the settle period, tries to open
// it.
func (w *Watcher) check(c *cand, now time.Time) {
	switch w.restat(c, now) {
	case statGone:
		return
	case statUnreachable:
		// Do not hammer a share that went away: try again at scan pace.
		w.schedule(c, now.Add(max(w.settle, w.scanEvery/2)))
		return
	}
	stableAt := later(c.lastChange, c.lastEvent).Add(w.settle)
	if now.Before(stableAt) {
		if c.state != settling {
			w.setState(c, settling)
		}
		w.schedule(c, minTime(now.Add(w.poll), stableAt))
		return
	}
	f, err := w.open(c.path)
	if err == nil {
		if f != nil {
			f.Close()
		}
		c.openErr = nil
		w.enqueue(c)
		return
	}
	if errors.Is(err, fs.ErrNotExist) {
		w.drop(c, true)
		return
	}
	c.attempts++
	if c.attempts > w.retries {
		c.openErr = fmt.Errorf("watch: %s: cannot open after %d attempts: %w", c.path, c.attempts, err)
		w.log.Warn().Err(err).Str("file", c.path).Int("attempts", c.attempts).Msg("file settled but cannot be opened; handing it out as failed")
		w.enqueue(c)
		return
	}
	delay := min(w.backoff<<(c.attempts-1), maxOpenBackoff)
	if delay <= 0 { // shift overflow
		delay = maxOpenBackoff
	}
	w.log.Debug().Err(err).Str("file", c.path).Int("attempt", c.attempts).Dur("retry_in", delay).Msg("file settled but cannot be opened yet")
	w.setState(c, retrying)
	w.schedule(c, now.Add(delay))
}

func minTime(a, b time.Time) time.Time {
	if a.Before(b) {
		return a
	}
	return b
}

// enqueue puts c in the hand-out queue.
func (w *Watcher) enqueue(c *cand) {
	w.setState(c, waiting)
	c.gen++ // no deadline while waiting
	c.qgen++
	w.queue = append(w.queue, queued{c: c, qgen: c.qgen})
	if len(w.queue)-w.qhead > 2*w.nWait+64 {
		// Drop entries of files that went back to settling or vanished
		// while they waited, so the queue stays bounded by the files.
		live := w.queue[:0]
		for _, q := range w.queue[w.qhead:] {
			if q.c.state == waiting && q.c.qgen == q.qgen && w.cands[q.c.path] == q.c {
				live = append(live, q)
			}
		}
		clear(w.queue[len(live):])
		w.queue = live
		w.qhead = 0
	}
}

// head returns the next candidate to hand out, or nil. A candidate that has
// waited longer than the stat period, or got an event since it was checked,
// is checked again first: it goes back to settling if it changed, and is
// dropped if it vanished.
func (w *Watcher) head(now time.Time) *cand {
	for w.qhead < len(w.queue) {
		q := w.queue[w.qhead]
		c := q.c
		if c.state != waiting || c.qgen != q.qgen || w.cands[c.path] != c {
			w.queue[w.qhead] = queued{}
			w.qhead++
			continue
		}
		if now.Sub(c.checkedAt) > w.poll || c.lastEvent.After(c.checkedAt) {
			switch w.restat(c, now) {
			case statGone:
				continue
			case statUnreachable:
				w.schedule(c, now.Add(max(w.settle, w.scanEvery/2)))
				continue
			}
			if c.state != waiting || now.Before(later(c.lastChange, c.lastEvent).Add(w.settle)) {
				if c.state == waiting {
					w.setState(c, settling)
				}
				w.schedule(c, now.Add(w.poll))
				continue
			}
		}
		return c
	}
	w.compactQueue()
	return nil
}

// compactQueue releases the consumed front of the queue.
func (w *Watcher) compactQueue() {
	if w.qhead == 0 {
		return
	}
	n := copy(w.queue, w.queue[w.qhead:])
	clear(w.queue[n:])
	w.queue = w.queue[:n]
	w.qhead = 0
}

// handedOut records that c was delivered.
func (w *Watcher) handedOut(c *cand) {
	w.queue[w.qhead] = queued{}
	w.qhead++
	if w.qhead > 1024 && w.qhead > len(w.queue)/2 {
		w.compactQueue()
	}
	delete(w.cands, c.path)
	w.setState(c, gone)
	w.doneMu.Lock()
	w.done[c.path] = doneEntry{folder: c.folder, size: c.size, mtime: c.mtime}
	w.doneMu.Unlock()
	failed := c.openErr != nil
	w.count(func(s *Stats) {
		s.HandedOut++
		if failed {
			s.Failed++
		}
	})
	w.log.Debug().Str("file", c.path).Int64("size", c.size).Msg("file handed out")
}

// discover starts tracking path (claimed by folder idx, with stat info fi)
// unless it is tracked already, was handed out in this state, or is known
// to Seen. A tracked file is refreshed from fi.
func (w *Watcher) discover(path string, idx int, fi fs.FileInfo, now time.Time) *cand {
	size, mtime := fi.Size(), fi.ModTime()
	if c, ok := w.cands[path]; ok {
		if size != c.size || !mtime.Equal(c.mtime) {
			c.size, c.mtime = size, mtime
			c.lastChange = now
			c.attempts = 0
			c.openErr = nil
			if c.state != settling {
				w.setState(c, settling)
			}
			w.schedule(c, now.Add(w.poll))
		}
		return c
	}
	w.doneMu.Lock()
	d, ok := w.done[path]
	if ok && d.size == size && d.mtime.Equal(mtime) {
		w.doneMu.Unlock()
		return nil
	}
	if ok {
		// Changed since it was handed out or known: consider it anew.
		delete(w.done, path)
	}
	w.doneMu.Unlock()
	if w.seen != nil && w.seen.Known(path, size, mtime) {
		w.doneMu.Lock()
		w.done[path] = doneEntry{folder: idx, size: size, mtime: mtime}
		w.doneMu.Unlock()
		return nil
	}
	w.seq++
	c := &cand{path: path, folder: idx, seq: w.seq, size: size, mtime: mtime, lastChange: now, checkedAt: now}
	w.cands[path] = c
	w.schedule(c, now.Add(w.poll))
	w.log.Debug().Str("file", path).Int64("size", size).Msg("new file; waiting for it to settle")
	return c
}

// scan walks every folder, discovers new files, refreshes tracked ones and
// forgets the ones that are gone. A folder that could not be read
// completely forgets nothing.
func (w *Watcher) scan() {
	now := time.Now()
	present := make(map[string]struct{})
	complete := make([]bool, len(w.folders))
	for i, f := range w.folders {
		complete[i] = w.walk(i, f.path, true, present, now)
	}
	for p, c := range w.cands {
		if _, ok := present[p]; !ok && complete[c.folder] {
			w.drop(c, true)
		}
	}
	w.doneMu.Lock()
	for p, d := range w.done {
		if _, ok := present[p]; !ok && d.folder < len(complete) && complete[d.folder] {
			delete(w.done, p)
		}
	}
	w.doneMu.Unlock()
	w.count(func(s *Stats) { s.Scans++ })
}

// walk reads directory dir of folder i (recursing when the folder is
// recursive), adds fsnotify watches where they are missing, and discovers
// the files folder i claims. It reports whether everything was read.
func (w *Watcher) walk(i int, dir string, root bool, present map[string]struct{}, now time.Time) bool {
	f := w.folders[i]
	if !f.poll {
		w.addWatch(dir)
	}
	entries, err := os.ReadDir(dir)
	if root {
		w.setHealth(i, err)
		if err != nil {
			delete(w.noWatch, dir) // try to watch it again once it is back
		}
	}
	if err != nil {
		if !root && errors.Is(err, fs.ErrNotExist) {
			return true // removed while we walked
		}
		if !root {
			w.log.Warn().Err(err).Str("folder", dir).Msg("cannot read folder")
		}
		return false
	}
	ok := true
	for _, e := range entries {
		name := e.Name()
		if skipName(name) {
			continue
		}
		p := filepath.Join(dir, name)
		if e.IsDir() {
			if f.recursive {
				if info, err := e.Info(); err == nil && hiddenAttr(info) {
					continue
				}
				ok = w.walk(i, p, false, present, now) && ok
			}
			continue
		}
		if !matchAny(f.include, name) {
			continue
		}
		if idx, mine := w.owner(p); !mine || idx != i {
			continue
		}
		fi, err := os.Stat(p) // follows links; directory entries may lag for open files on Windows
		if err != nil || !fi.Mode().IsRegular() || hiddenAttr(fi) {
			continue
		}
		present[p] = struct{}{}
		w.discover(p, i, fi, now)
	}
	return ok
}

// addWatch puts dir under fsnotify watch unless it is already.
func (w *Watcher) addWatch(dir string) {
	if w.fsw == nil || w.watched[dir] || w.noWatch[dir] {
		return
	}
	if err := w.fsw.Add(dir); err != nil {
		w.noWatch[dir] = true
		w.log.Warn().Err(err).Str("folder", dir).Msg("cannot watch folder; relying on periodic scans")
		return
	}
	w.watched[dir] = true
}

// handleEvent treats an fsnotify event as a hint: it starts tracking new
// files, pushes back the settle deadline of files being written, and
// forgets files that vanished. Nothing is handed out from an event alone.
func (w *Watcher) handleEvent(ev fsnotify.Event, now time.Time) {
	path := filepath.Clean(ev.Name)
	if ev.Has(fsnotify.Remove) || ev.Has(fsnotify.Rename) {
		if w.watched[path] {
			delete(w.watched, path)
			_ = w.fsw.Remove(path) // may already be gone with the directory
		}
		delete(w.noWatch, path)
		_, err := os.Lstat(path)
		vanished := errors.Is(err, fs.ErrNotExist)
		if c, ok := w.cands[path]; ok {
			if vanished {
				w.drop(c, true)
			} else {
				c.lastEvent = now
			}
		}
		if vanished {
			w.doneMu.Lock()
			delete(w.done, path)
			w.doneMu.Unlock()
		}
		if vanished || !ev.Has(fsnotify.Create) {
			return
		}
	}
	if c, ok := w.cands[path]; ok {
		c.lastEvent = now
		return
	}
	if !ev.Has(fsnotify.Create) && !ev.Has(fsnotify.Write) && !ev.Has(fsnotify.Chmod) {
		return
	}
	fi, err := os.Stat(path)
	if err != nil {
		return
	}
	if fi.IsDir() {
		if i, ok := w.dirOwner(path); ok && ev.Has(fsnotify.Create) && !hiddenAttr(fi) {
			// A new subfolder: watch it, then read it, since files may
			// have arrived before the watch was in place.
			w.walk(i, path, false, make(map[string]struct{}), now)
		}
		return
	}
	if !fi.Mode().IsRegular() || hiddenAttr(fi) {
		return
	}
	i, ok := w.owner(path)
	if !ok {
		return
	}
	if c := w.discover(path, i, fi, now); c != nil {
		c.lastEvent = now
	}
}
