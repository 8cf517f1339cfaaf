package daq

import (
	"bufio"
	"context"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq/ptytest"
)

// queryLogger is a four-channel instrument; its reply marks an open input "OPEN" and an
// overload with the SCPI overload value 9.9E37.
func queryLogger(port string) Logger {
	return Logger{
		Name: "dmm", Port: port, Baud: 9600, Format: "query",
		Query: QueryFormat{
			Command: "MEAS:TEMP? (@101:104)", Interval: 400 * time.Millisecond, Timeout: 300 * time.Millisecond,
			Terminator: "\n",
			Columns: []Column{
				{Index: 1, Channel: "a"}, {Index: 2, Channel: "b"}, {Index: 3, Channel: "c"}, {Index: 4, Channel: "d"},
			},
		},
		Open: OpenCircuit{Markers: []string{"OPEN"}, AtOrAbove: fptr(9.9e37)},
	}
}

// instrument answers each query on the master end of p with answer(n, command): after
// delay, the reply (none if empty). It stops when the pty closes.
func instrument(p *ptytest.PTY, answer func(n int, cmd string) (time.Duration, string)) {
	go func() {
		r := bufio.NewReader(p.Master)
		for n := 0; ; n++ {
			cmd, err := r.ReadString('\n')
			if err != nil {
				return
			}
			delay, reply := answer(n, cmd)
			time.Sleep(delay)
			if reply != "" {
				if _, err := p.Master.Write([]byte(reply)); err != nil {
					return
				}
			}
		}
	}()
}

// nextQuery returns the four readings of one reply.
func nextQuery(t *testing.T, out <-chan Reading) [4]Reading {
	t.Helper()
	var q [4]Reading
	for i := range q {
		q[i] = nextReading(t, out)
	}
	return q
}

// TestQuerySourcePTY drives the query driver through go.bug.st/serial on a pty with a
// fake instrument on the other end: a good reply, a garbled one, a late one (whose
// stale answer must not be taken for the next), then unplug and replug.
func TestQuerySourcePTY(t *testing.T) {
	link := ptytest.NewLink(t)
	cmds := make(chan string, 64)
	instrument(link.PTY(), func(n int, cmd string) (time.Duration, string) {
		cmds <- cmd
		switch n {
		case 0:
			return 0, "+2.150E+02,+2.500E+01,OPEN,+9.9E37\r\n"
		case 1:
			return 0, "#E-113 garbled\n"
		case 2:
			return 400 * time.Millisecond, "1,1,1,1\n" // 100 ms after the 300 ms timeout
		default:
			return 0, "30,31,32,33\n"
		}
	})
	src, err := NewSource(queryLogger(link.Path), nil)
	if err != nil {
		t.Fatal(err)
	}
	qs := src.(*QuerySource)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	out := make(chan Reading, 64)
	done := make(chan error, 1)
	go func() { done <- src.Run(ctx, out) }()

	first := nextQuery(t, out)
	if first[0].Celsius != 215 || first[1].Celsius != 25 || first[2].Status != StatusOpen || first[3].Status != StatusOpen {
		t.Errorf("first reply = %+v; want 215, 25, open (marker), open (overload)", first)
	}
	if got := <-cmds; got != "MEAS:TEMP? (@101:104)\n" {
		t.Errorf("command = %q, want the configured one with its terminator", got)
	}
	second := nextQuery(t, out)
	for _, r := range second {
		if r.Celsius != 30+float64(strings.Index("abcd", r.Channel)) {
			t.Errorf("reading after the garbled and late replies = %+v; a stale reply was taken", r)
		}
	}
	st := qs.Stats()
	if st.ParseErrors != 1 || st.ReadErrors != 1 || !st.Up {
		t.Errorf("stats %+v: want 1 parse error (garbled), 1 read error (late), port up", st)
	}

	link.Unplug()
	waitFor(t, "the source sees the unplug", func() bool { return !qs.Stats().Up && qs.Stats().Reconnects >= 1 })
	p := link.Replug()
	instrument(p, func(int, string) (time.Duration, string) { return 0, "40,41,42,43\n" })
	for {
		if r := nextReading(t, out); r.Channel == "a" && r.Celsius == 40 {
			break
		}
	}
	cancel()
	if err := <-done; !errors.Is(err, context.Canceled) {
		t.Errorf("Run returned %v, want context.Canceled", err)
	}
}

func TestReplyParser(t *testing.T) {
	cfg := queryLogger("/dev/null")
	cfg.Query.Separator = ";"
	cfg.Query.Columns = []Column{{Index: 3, Channel: "c"}, {Index: 1, Channel: "a"}}
	cfg.Inputs = []Input{{Channel: "a", Unit: "K"}}
	p, err := NewReplyParser(cfg)
	if err != nil {
		t.Fatal(err)
	}
	got, err := p.Parse([]byte(" 300.15 ; skipped ; -1.5E+01 ;extra"), t0)
	if err != nil || len(got) != 2 || got[0].Celsius != -15 || math.Abs(got[1].Celsius-27) > 1e-9 {
		t.Errorf("Parse = %+v, %v; want c = -15, a = 27 °C", got, err)
	}
	if _, err := p.Parse([]byte("1;2"), t0); !errors.Is(err, ErrShortLine) {
		t.Errorf("short reply: err = %v, want ErrShortLine", err)
	}
}

// FuzzReplyParse checks that the reply parser never panics, returns all columns or
// none, and never passes a non-finite value as OK. Seeds: testdata/daq/reply-seeds.txt.
func FuzzReplyParse(f *testing.F) {
	seeds, err := os.ReadFile(filepath.Join("..", "testdata", "daq", "reply-seeds.txt"))
	if err != nil {
		f.Fatal(err)
	}
	for _, s := range strings.Split(string(seeds), "\n") {
		f.Add([]byte(s))
	}
	cfg := queryLogger("/dev/null")
	cfg.Inputs = []Input{{Channel: "b", Unit: "mV", Thermocouple: "J", ColdJunction: "a"}}
	p, err := NewReplyParser(cfg)
	if err != nil {
		f.Fatal(err)
	}
	f.Fuzz(func(t *testing.T, reply []byte) {
		got, err := p.Parse(reply, t0)
		if (err == nil) != (len(got) == 4) {
			t.Fatalf("reply %q: %d readings, err %v", reply, len(got), err)
		}
		for _, r := range got {
			if r.OK() && (math.IsNaN(r.Celsius) || math.IsInf(r.Celsius, 0)) {
				t.Fatalf("reply %q: OK reading %+v is not finite", reply, r)
			}
		}
	})
}
