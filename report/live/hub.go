package live

import (
	"net"
	"sync"
	"time"
)

// hub hands the latest drawn main part to the open event streams. A
// stream that is slow misses intermediate versions, never blocks the
// others or the daemon.
type hub struct {
	mu   sync.Mutex
	max  int
	subs map[chan struct{}]bool
	cur  []byte // the main part
	ev   []byte // the same as one server-sent event, formatted once
	id   int64
	seq  uint64
	done chan struct{}
	once sync.Once
}

func newHub(max int) *hub {
	return &hub{max: max, subs: map[chan struct{}]bool{}, done: make(chan struct{})}
}

// subscribe returns a channel that is signalled on every new version;
// false when the streams are at their limit.
func (h *hub) subscribe() (chan struct{}, bool) {
	h.mu.Lock()
	defer h.mu.Unlock()
	if len(h.subs) >= h.max {
		return nil, false
	}
	c := make(chan struct{}, 1)
	h.subs[c] = true
	return c, true
}

func (h *hub) unsubscribe(c chan struct{}) {
	h.mu.Lock()
	delete(h.subs, c)
	h.mu.Unlock()
}

// streams returns the number of open streams.
func (h *hub) streams() int {
	h.mu.Lock()
	defer h.mu.Unlock()
	return len(h.subs)
}

// publish makes b the latest version and signals every stream.
func (h *hub) publish(id int64, b []byte) {
	h.mu.Lock()
	defer h.mu.Unlock()
	h.cur, h.id, h.ev = b, id, sseEvent("hit", id, b)
	h.seq++
	for c := range h.subs {
		select {
		case c <- struct{}{}:
		default:
		}
	}
}

func (h *hub) latest() ([]byte, int64, bool) {
	b, id, _, ok := h.latestSeq()
	return b, id, ok
}

func (h *hub) latestSeq() ([]byte, int64, uint64, bool) {
	h.mu.Lock()
	defer h.mu.Unlock()
	return h.cur, h.id, h.seq, h.seq > 0
}

// latestEvent returns the latest version as a formatted event.
func (h *hub) latestEvent() ([]byte, uint64, bool) {
	h.mu.Lock()
	defer h.mu.Unlock()
	return h.ev, h.seq, h.seq > 0
}

// close ends every stream.
func (h *hub) close() { h.once.Do(func() { close(h.done) }) }

// limiter is a token bucket per client address. The table of clients is
// bounded: when it is full, clients idle for a minute are forgotten, and
// if none is, new clients share one bucket.
type limiter struct {
	mu      sync.Mutex
	rate    float64
	burst   float64
	clients map[string]*bucket
}

type bucket struct {
	tokens float64
	last   time.Time
}

const maxClients = 4096

func newLimiter(rate float64, burst int) *limiter {
	return &limiter{rate: rate, burst: float64(burst), clients: map[string]*bucket{}}
}

func (l *limiter) allow(client string, now time.Time) bool {
	l.mu.Lock()
	defer l.mu.Unlock()
	b, ok := l.clients[client]
	if !ok {
		if len(l.clients) >= maxClients {
			for k, v := range l.clients {
				if now.Sub(v.last) > time.Minute {
					delete(l.clients, k)
				}
			}
		}
		if len(l.clients) >= maxClients {
			client = "(overflow)"
			b = l.clients[client]
		}
		if b == nil {
			b = &bucket{tokens: l.burst, last: now}
			l.clients[client] = b
		}
	}
	b.tokens = min(l.burst, b.tokens+now.Sub(b.last).Seconds()*l.rate)
	b.last = now
	if b.tokens < 1 {
		return false
	}
	b.tokens--
	return true
}

// limitListener closes connections beyond max at once, so that a client
// flood cannot queue up in the daemon.
func limitListener(ln net.Listener, max int) net.Listener {
	return &limitedListener{Listener: ln, sem: make(chan struct{}, max)}
}

type limitedListener struct {
	net.Listener
	sem chan struct{}
}

func (l *limitedListener) Accept() (net.Conn, error) {
	for {
		c, err := l.Listener.Accept()
		if err != nil {
			return nil, err
		}
		select {
		case l.sem <- struct{}{}:
			return &limitedConn{Conn: c, release: func() { <-l.sem }}, nil
		default:
			c.Close()
		}
	}
}

type limitedConn struct {
	net.Conn
	once    sync.Once
	release func()
}

func (c *limitedConn) Close() error {
	err := c.Conn.Close()
	c.once.Do(c.release)
	return err
}
