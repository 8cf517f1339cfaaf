package daq

import (
	"context"
	"errors"
	"io"
	"log/slog"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"go.bug.st/serial"

	"github.com/settle-lab/settle/daq/ptytest"
)

func TestBackoffCapBoundsReplug(t *testing.T) {
	// The daemon's own bounds: however long a port was down, the next reopen attempt
	// is at most a second away (issue: readings resume within 2 s of a replug).
	b := backoff{min: backoffMin, max: backoffMax}
	for range 50 {
		if w := b.Next(); w > time.Second {
			t.Fatalf("reopen wait %v exceeds 1 s", w)
		}
	}
}

func TestBackoff(t *testing.T) {
	b := backoff{min: 100 * time.Millisecond, max: 5 * time.Second}
	want := []time.Duration{100, 200, 400, 800, 1600, 3200, 5000, 5000}
	for i, w := range want {
		if got := b.Next(); got != w*time.Millisecond {
			t.Errorf("wait %d = %v, want %v", i, got, w*time.Millisecond)
		}
	}
	b.Reset()
	if got := b.Next(); got != 100*time.Millisecond {
		t.Errorf("after Reset wait = %v, want 100ms", got)
	}
}

func TestLineSplitter(t *testing.T) {
	long := strings.Repeat("9", 20)
	tests := []struct {
		name     string
		chunks   []string
		want     []string
		overlong int
	}{
		{"one chunk", []string{"a,1\nb,2\n"}, []string{"a,1", "b,2"}, 0},
		{"split across reads", []string{"a,", "1\nb", ",2\n", "c"}, []string{"a,1", "b,2"}, 0},
		{"overlong discarded", []string{"ok\n" + long + "\nnext\n"}, []string{"ok", "next"}, 1},
		{"overlong across reads", []string{long[:8], long[8:], "\nnext\n"}, []string{"next"}, 1},
		{"exactly the limit", []string{long[:10] + "\n"}, []string{long[:10]}, 0},
	}
	for _, tc := range tests {
		s := lineSplitter{limit: 10}
		var got []string
		overlong := 0
		for _, c := range tc.chunks {
			overlong += s.Feed([]byte(c), func(l []byte) { got = append(got, string(l)) })
		}
		if strings.Join(got, "|") != strings.Join(tc.want, "|") || overlong != tc.overlong {
			t.Errorf("%s: got %q, %d overlong; want %q, %d", tc.name, got, overlong, tc.want, tc.overlong)
		}
	}
}

// fakePort replays bytes in small chunks, with "no data yet" (0, nil) reads between
// them, then fails as an unplugged adapter does.
type fakePort struct {
	serial.Port // unused methods panic
	data        []byte
	chunk       int
	idle        bool
	closed      bool
	panics      bool
}

func (p *fakePort) Read(b []byte) (int, error) {
	if p.panics {
		var set [16]uint64
		fd := 1024
		set[fd/64] |= 1 // what an fd_set does with a descriptor beyond FD_SETSIZE
	}
	if p.idle = !p.idle; p.idle {
		return 0, nil
	}
	if len(p.data) == 0 {
		return 0, io.ErrUnexpectedEOF
	}
	n := copy(b[:min(len(b), p.chunk)], p.data)
	p.data = p.data[n:]
	return n, nil
}
func (p *fakePort) SetReadTimeout(time.Duration) error { return nil }
func (p *fakePort) ResetInputBuffer() error            { return nil }
func (p *fakePort) Close() error                       { p.closed = true; return nil }

// fakeOpener hands out one fakePort per session and counts opens.
type fakeOpener struct {
	mu    sync.Mutex
	opens int
	data  []byte
	ports []*fakePort
}

func (o *fakeOpener) open(path string, mode *serial.Mode) (serial.Port, error) {
	o.mu.Lock()
	defer o.mu.Unlock()
	o.opens++
	if o.opens == 2 {
		return nil, errors.New("no such device") // the first reopen fails
	}
	p := &fakePort{data: append([]byte(nil), o.data...), chunk: 7}
	o.ports = append(o.ports, p)
	return p, nil
}

func rackSource(t *testing.T, port string) *LineSource {
	t.Helper()
	cfg := Logger{Name: "rack2", Port: port, Format: "line", Line: LineFormat{
		ClockColumn: 1,
		Columns:     []Column{{Index: 2, Channel: "S1"}, {Index: 3, Channel: "S2"}, {Index: 4, Channel: "amb"}},
	}}
	src, err := NewLineSource(cfg, slog.New(slog.DiscardHandler))
	if err != nil {
		t.Fatal(err)
	}
	return src
}

// TestLineSourceFakePort replays testdata/daq/rack2-session.txt through a fake port that
// then fails; the source reads it, counts the bad line, reopens after a failed attempt
// and reads the session again.
func TestLineSourceFakePort(t *testing.T) {
	data, err := os.ReadFile(filepath.Join("..", "testdata", "daq", "rack2-session.txt"))
	if err != nil {
		t.Fatal(err)
	}
	opener := &fakeOpener{data: append(data, strings.Repeat("x", MaxLineBytes+1)+"\n"...)}
	src := rackSource(t, "/dev/fake")
	src.port.open = opener.open
	ctx, cancel := context.WithCancel(context.Background())
	out := make(chan Reading, 100)
	done := make(chan error, 1)
	go func() { done <- src.Run(ctx, out) }()

	const perSession = 4 * 3 // four good lines, three columns
	var got []Reading
	for len(got) < 2*perSession {
		select {
		case r := <-out:
			got = append(got, r)
		case <-time.After(10 * time.Second):
			t.Fatalf("got %d readings, want %d", len(got), 2*perSession)
		}
	}
	// Each session has a short line and an overlong one; each ends in a read error, and
	// the first reopen failed: wait for the second session to finish.
	waitFor(t, "two sessions are over", func() bool {
		st := src.Stats()
		return st.ParseErrors >= 4 && st.ReadErrors >= 3
	})
	cancel()
	if err := <-done; !errors.Is(err, context.Canceled) {
		t.Errorf("Run returned %v, want context.Canceled", err)
	}
	if got[3].Channel != "S1" || got[3].Celsius != 839.9 || got[3].Time.Sub(got[0].Time) != 2*time.Second {
		t.Errorf("second line S1 = %+v, want 839.9 °C two logger seconds after the first", got[3])
	}
	if got[6].Status != StatusUnparsable || got[6].Raw != "OPEN" {
		t.Errorf("third line S1 = %+v, want unparsable OPEN kept", got[6])
	}
	// A third session may have started before cancel, so counts are lower bounds.
	if st := src.Stats(); st.Reconnects < 2 || st.Up {
		t.Errorf("stats = %+v, want ≥2 reconnects and down", st)
	}
	for i, p := range opener.ports {
		if i < len(opener.ports)-1 && !p.closed {
			t.Errorf("port of session %d was not closed", i)
		}
	}
}

func TestSafeReadTurnsPanicIntoError(t *testing.T) {
	n, err := safeRead(&fakePort{panics: true}, make([]byte, 8))
	if n != 0 || !errors.Is(err, errSelectLimit) {
		t.Errorf("safeRead = %d, %v; want 0 and errSelectLimit", n, err)
	}
}

// hogDescriptors takes every free descriptor below 1024 until the test ends, as
// network clients arriving while a port is out would.
func hogDescriptors(t *testing.T) {
	t.Helper()
	var lim syscall.Rlimit
	if err := syscall.Getrlimit(syscall.RLIMIT_NOFILE, &lim); err != nil || lim.Cur < selectFDLimit+16 {
		t.Skipf("open-file limit %d too low to reach descriptor 1024", lim.Cur)
	}
	var fds []int
	t.Cleanup(func() {
		for _, fd := range fds {
			syscall.Close(fd)
		}
	})
	for {
		fd, err := syscall.Open("/dev/null", syscall.O_RDONLY|syscall.O_CLOEXEC, 0)
		if err != nil {
			t.Fatal(err)
		}
		fds = append(fds, fd)
		if fd >= selectFDLimit-2 {
			return
		}
	}
}

// emptyReserve gives the reserve's descriptors back for the rest of the test.
func emptyReserve(t *testing.T) {
	reserve.mu.Lock()
	reserve.release(len(reserve.fds))
	reserve.mu.Unlock()
	t.Cleanup(ReserveDescriptors)
}

// TestSelectHeadroomGuard fills the descriptor table up to 1024 with no reserve and
// checks that opening a port is refused with an error instead of a panic in Read later.
func TestSelectHeadroomGuard(t *testing.T) {
	emptyReserve(t)
	hogDescriptors(t)
	reserve.mu.Lock()
	reserve.fds = nil // the reserve cannot be refilled below 1024 either
	reserve.mu.Unlock()
	_, err := openSerial("/dev/null", &serial.Mode{BaudRate: DefaultBaud})
	if !errors.Is(err, errSelectLimit) {
		t.Errorf("openSerial with descriptors near 1024: err = %v, want errSelectLimit", err)
	}
}

// With the reserve taken at start-up, a port opens and is read, closed and opened
// again while every other descriptor below 1024 is taken.
func TestReserveKeepsPortsBelow1024(t *testing.T) {
	emptyReserve(t)
	ReserveDescriptors()
	hogDescriptors(t)
	p := ptytest.Open(t)
	for round := range 3 {
		port, err := openSerial(p.Path(), &serial.Mode{BaudRate: DefaultBaud})
		if err != nil {
			t.Fatalf("round %d: open with the descriptor table full: %v", round, err)
		}
		if err := port.SetReadTimeout(time.Second); err != nil {
			t.Fatal(err)
		}
		p.WriteLine(t, "21.5")
		buf := make([]byte, 64)
		n, err := safeRead(port, buf)
		if err != nil || !strings.HasPrefix(string(buf[:n]), "21.5") {
			t.Errorf("round %d: read %q, %v; want the line", round, buf[:n], err)
		}
		if err := port.Close(); err != nil {
			t.Fatal(err)
		}
	}
}

func TestNewSource(t *testing.T) {
	cfg := Logger{Name: "rack2", Port: "/dev/ttyUSB0", Format: "line",
		Line: LineFormat{Columns: []Column{{Index: 1, Channel: "a"}}}}
	src, err := NewSource(cfg, nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, ok := src.(StatsReporter); !ok || src.Name() != "rack2" {
		t.Errorf("NewSource(line) = %T named %q, want a StatsReporter named rack2", src, src.Name())
	}
	cfg.Format = "modbus-ascii"
	_, err = NewSource(cfg, nil)
	if !errors.Is(err, ErrUnknownFormat) || !strings.Contains(err.Error(), `logger "rack2": format "modbus-ascii"`) {
		t.Errorf("unknown format: err = %v, want ErrUnknownFormat naming logger and format", err)
	}
}

func TestNewLineSourceRejects(t *testing.T) {
	good := Logger{Name: "rack2", Port: "/dev/ttyUSB0", Format: "line",
		Line: LineFormat{Columns: []Column{{Index: 1, Channel: "a"}}}}
	tests := []struct {
		name string
		edit func(*Logger)
		want string
	}{
		{"no port", func(c *Logger) { c.Port = "" }, `logger "rack2": port: must not be empty`},
		{"negative baud", func(c *Logger) { c.Baud = -1 }, `logger "rack2": baud -1: must be positive`},
		{"no columns", func(c *Logger) { c.Line.Columns = nil }, `logger "rack2": line.columns: at least one column is needed`},
	}
	for _, tc := range tests {
		c := good
		tc.edit(&c)
		if _, err := NewLineSource(c, nil); err == nil || err.Error() != tc.want {
			t.Errorf("%s: err = %v, want %q", tc.name, err, tc.want)
		}
	}
}
