package exporter

import (
	"crypto/tls"
	"net"
	"net/http"
	"sync"
)

// DefaultMaxConns is the most HTTP connections the server holds open at once. It
// keeps the daemon's descriptors well below 1024, where go.bug.st/serial's select()
// can still watch a reopened serial port (see daq.openSerial), and within the systemd
// unit's LimitNOFILE.
const DefaultMaxConns = 256

// limitListener holds at most max connections open. When a new connection arrives at
// the limit, the longest-idle one (a keep-alive connection between requests, or one
// that has sent nothing yet) is closed to make room, so clients that connect and never
// leave cannot lock out /metrics and /healthz. When every connection is busy with a
// request, Accept waits for one to finish (the kernel's backlog holds newcomers,
// taking no descriptor of ours).
type limitListener struct {
	net.Listener
	max    int
	mu     sync.Mutex
	cond   *sync.Cond
	conns  map[net.Conn]*connSlot // open connections, by the accepted conn
	seq    uint64
	closed bool
}

type connSlot struct {
	idle  bool   // no request in progress
	since uint64 // order in which it became idle
}

func newLimitListener(ln net.Listener, max int) *limitListener {
	l := &limitListener{Listener: ln, max: max, conns: map[net.Conn]*connSlot{}}
	l.cond = sync.NewCond(&l.mu)
	return l
}

// Accept waits for room (evicting an idle connection if there is one), then accepts.
func (l *limitListener) Accept() (net.Conn, error) {
	l.mu.Lock()
	for len(l.conns) >= l.max && !l.closed {
		if !l.evictLocked() {
			l.cond.Wait()
		}
	}
	l.mu.Unlock()
	c, err := l.Listener.Accept()
	if err != nil {
		return nil, err
	}
	l.mu.Lock()
	l.seq++
	l.conns[c] = &connSlot{idle: true, since: l.seq}
	l.mu.Unlock()
	return c, nil
}

// evictLocked closes the longest-idle connection and reports whether there was one.
func (l *limitListener) evictLocked() bool {
	var victim net.Conn
	var oldest uint64
	for c, s := range l.conns {
		if s.idle && (victim == nil || s.since < oldest) {
			victim, oldest = c, s.since
		}
	}
	if victim == nil {
		return false
	}
	delete(l.conns, victim)
	victim.Close()
	return true
}

// Close stops Accept, including one waiting for room.
func (l *limitListener) Close() error {
	l.mu.Lock()
	l.closed = true
	l.cond.Broadcast()
	l.mu.Unlock()
	return l.Listener.Close()
}

// track is the server's ConnState hook: it marks connections busy or idle and frees
// the slot of a closed one.
func (l *limitListener) track(c net.Conn, st http.ConnState) {
	if tc, ok := c.(*tls.Conn); ok {
		c = tc.NetConn()
	}
	l.mu.Lock()
	defer l.mu.Unlock()
	s := l.conns[c]
	if s == nil {
		return // evicted already
	}
	switch st {
	case http.StateActive:
		s.idle = false
	case http.StateIdle:
		l.seq++
		s.idle, s.since = true, l.seq
	case http.StateClosed, http.StateHijacked:
		delete(l.conns, c)
	}
	l.cond.Broadcast()
}

// open returns the number of connections held.
func (l *limitListener) open() int {
	l.mu.Lock()
	defer l.mu.Unlock()
	return len(l.conns)
}
