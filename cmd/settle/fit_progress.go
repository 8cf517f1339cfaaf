package main

import (
	"fmt"
	"io"
	"os"
	"sync"
	"sync/atomic"
	"time"
)

// Progress of a long `settle fit`: nothing for progressDelay, then a line on stderr
// every progressEvery (rewritten in place on a terminal, every few seconds otherwise)
// with the phase, the share of the file read and the time so far. Standard output,
// where --json writes, never carries it. Variables so that tests can shorten them.
var (
	progressDelay = time.Second
	progressEvery = time.Second
)

// progress reports one `settle fit` on w.
type progress struct {
	w     io.Writer
	tty   bool
	file  string
	size  int64
	read  atomic.Int64
	start time.Time

	mu     sync.Mutex
	phase  string
	shown  bool
	stop   chan struct{}
	done   chan struct{}
	finish sync.Once
}

// startProgress starts reporting on w (nil: no reporting) for file of size bytes.
func startProgress(w io.Writer, file string, size int64) *progress {
	p := &progress{w: w, file: file, size: size, start: time.Now(), phase: "reading",
		stop: make(chan struct{}), done: make(chan struct{})}
	if f, ok := w.(*os.File); ok {
		if st, err := f.Stat(); err == nil && st.Mode()&os.ModeCharDevice != 0 {
			p.tty = true
		}
	}
	if w == nil {
		close(p.done)
		return p
	}
	go p.loop()
	return p
}

func (p *progress) loop() {
	defer close(p.done)
	select {
	case <-p.stop:
		return
	case <-time.After(progressDelay):
	}
	every := progressEvery
	if !p.tty {
		every *= 5
	}
	p.show()
	t := time.NewTicker(every)
	defer t.Stop()
	for {
		select {
		case <-p.stop:
			return
		case <-t.C:
			p.show()
		}
	}
}

// show writes the current state.
func (p *progress) show() {
	p.mu.Lock()
	defer p.mu.Unlock()
	line := fmt.Sprintf("settle fit: %s: %s", p.file, p.phase)
	if p.phase == "reading" && p.size > 0 {
		line += fmt.Sprintf(" %d %% of %s", min(100, p.read.Load()*100/p.size), megabytes(p.size))
	}
	line += fmt.Sprintf(" (%.0f s)", time.Since(p.start).Seconds())
	if p.tty {
		fmt.Fprintf(p.w, "\r\033[K%s", line)
	} else {
		fmt.Fprintln(p.w, line)
	}
	p.shown = true
}

// setPhase names what is being done now, e.g. "fitting 4,000,000 readings".
func (p *progress) setPhase(s string) {
	p.mu.Lock()
	p.phase = s
	p.mu.Unlock()
}

// reader counts the bytes read through it.
func (p *progress) reader(r io.Reader) io.Reader { return &countReader{r: r, n: &p.read} }

// end stops reporting; when anything was shown it ends with the total time.
func (p *progress) end() {
	p.finish.Do(func() {
		close(p.stop)
		<-p.done
		p.mu.Lock()
		defer p.mu.Unlock()
		if p.shown {
			if p.tty {
				fmt.Fprint(p.w, "\r\033[K")
			}
			fmt.Fprintf(p.w, "settle fit: %s: done in %.1f s\n", p.file, time.Since(p.start).Seconds())
		}
	})
}

type countReader struct {
	r io.Reader
	n *atomic.Int64
}

func (c *countReader) Read(b []byte) (int, error) {
	n, err := c.r.Read(b)
	c.n.Add(int64(n))
	return n, err
}

// megabytes prints a size in MB with one decimal.
func megabytes(n int64) string { return fmt.Sprintf("%.1f MB", float64(n)/1e6) }

// thousands prints n with comma thousands separators.
func thousands(n int) string {
	s := fmt.Sprint(n)
	for i := len(s) - 3; i > 0; i -= 3 {
		s = s[:i] + "," + s[i:]
	}
	return s
}
