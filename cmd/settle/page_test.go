package main

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"log/slog"
	"maps"
	"math"
	"net/http"
	"net/http/httptest"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/chromedp/chromedp"
	"github.com/prometheus/client_golang/prometheus"

	"github.com/settle-lab/settle/cmd/settle/internal/sim"
	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/exporter"
	"github.com/settle-lab/settle/internal/forecastjson"
	"github.com/settle-lab/settle/internal/httpjson"
	"github.com/settle-lab/settle/predict"
	"github.com/settle-lab/settle/runs"
)

// chromium returns the path of Debian's chromium, or skips (fails under CI=true, where
// .ci/run installs it and the browser test must run).
func chromium(t *testing.T) string {
	t.Helper()
	path, err := exec.LookPath("chromium")
	if err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatal("chromium is not installed, and CI=true requires the browser test (apt-get install chromium)")
		}
		t.Skip("chromium is not installed (apt-get install chromium); skipping the browser test")
	}
	return path
}

// browser starts headless chromium (in UTC, so the test can predict clock times) and
// returns a tab context.
func browser(t *testing.T, width, height int) context.Context {
	t.Helper()
	opts := []chromedp.ExecAllocatorOption{
		chromedp.ExecPath(chromium(t)), chromedp.Headless, chromedp.NoFirstRun, chromedp.NoDefaultBrowserCheck,
		chromedp.Flag("no-sandbox", true), chromedp.DisableGPU, chromedp.Flag("disable-quic", true),
		chromedp.Flag("disable-background-networking", true), chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true), chromedp.Flag("disable-dev-shm-usage", true),
		chromedp.Flag("hide-scrollbars", true), chromedp.Env("TZ=UTC"),
		chromedp.UserDataDir(t.TempDir()), chromedp.WindowSize(width, height),
	}
	actx, cancelAlloc := chromedp.NewExecAllocator(context.Background(), opts...)
	ctx, cancel := chromedp.NewContext(actx)
	t.Cleanup(func() { cancel(); cancelAlloc() })
	return ctx
}

// viewports are the screens the board must serve: a laptop, a wall display, a phone.
var viewports = []struct {
	name string
	w, h int
}{{"1400x1000", 1400, 1000}, {"1920x1080", 1920, 1080}, {"phone", 390, 844}}

// cardView is what the page shows on one card, read from the DOM.
type cardView struct {
	Name, State, Class, Word, Glyph, Specimen, Temp, Celsius, Unit, Age string
	Next, NextTarget, Due, Link, LinkText, Fault                        string
	Notes                                                               []string
	CautionLine, Ack, Start, Stop                                       bool
	StripBG, StateBG                                                    string
	Readings, Journal, Curve, Centre, Targets                           int
	Top, Bottom, Left, Right                                            float64
}

const readCards = `[...document.querySelectorAll('.card[data-channel]')].map(c => {
  const q = (s) => c.querySelector(s), cv = q('canvas.plot'), r = c.getBoundingClientRect();
  const next = q('.next');
  return {
    Name: c.dataset.channel, State: c.dataset.state, Class: c.className,
    Word: q('.state-word').textContent, Glyph: q('.glyph').textContent,
    Specimen: q('.specimen').textContent, Temp: q('.temp').textContent, Celsius: q('.temp').dataset.celsius || '',
    Unit: q('.unit').textContent, Age: q('.age').textContent,
    Next: next.textContent, NextTarget: next.dataset.target || '', Due: next.dataset.due || '',
    Link: q('.link-state').dataset.link, LinkText: q('.link-state').textContent, Fault: c.dataset.fault || '',
    Notes: [...c.querySelectorAll('.notes li')].map(e => e.textContent),
    CautionLine: !q('.caution-line').hidden && q('.caution-line a').getAttribute('href') === '#cautions',
    Ack: !q('.ack').hidden, Start: !q('.start').hidden, Stop: !q('.stop').hidden,
    StripBG: getComputedStyle(q('.strip')).backgroundColor,
    StateBG: (() => { const e = document.createElement('div'); e.style.background = 'var(--st-' + c.dataset.state + ')'; document.body.append(e); const v = getComputedStyle(e).backgroundColor; e.remove(); return v; })(),
    Readings: +(cv.dataset.readings || 0), Journal: +(cv.dataset.journal || 0), Curve: +(cv.dataset.curve || 0), Centre: +(cv.dataset.centre || 0), Targets: +(cv.dataset.targets || 0),
    Top: r.top, Bottom: r.bottom, Left: r.left, Right: r.right,
  };
})`

// boardView is the board-wide part of the page.
type boardView struct {
	Summary, Demo, Room, Conn, Msg string
	Cautions                       []string
	CautionsShown                  bool
	RoomChannels                   []string
	Width, Height                  float64
}

const readBoard = `(() => {
  const c = document.getElementById('cautions');
  return {
    Summary: document.getElementById('summary').textContent,
    Demo: document.getElementById('demo').hidden ? '' : document.getElementById('demo').textContent,
    Room: document.getElementById('room').hidden ? '' : document.getElementById('room').textContent,
    RoomChannels: [...document.querySelectorAll('.room-item')].map(e => e.dataset.channel),
    Conn: document.getElementById('conn').dataset.conn,
    Msg: document.getElementById('msg').hidden ? '' : document.getElementById('msg').textContent,
    Cautions: [...c.querySelectorAll('li')].map(e => e.textContent),
    CautionsShown: c.getBoundingClientRect().height > 0,
    Width: innerWidth, Height: innerHeight,
  };
})()`

// readPage returns the cards and the board.
func readPage(t *testing.T, tab context.Context) ([]cardView, boardView) {
	t.Helper()
	cards, err := chromedp.Run(tab, chromedp.Evaluate[[]cardView](readCards))
	if err != nil {
		t.Fatal(err)
	}
	b, err := chromedp.Run(tab, chromedp.Evaluate[boardView](readBoard))
	if err != nil {
		t.Fatal(err)
	}
	return cards, b
}

// waitPage polls a JavaScript condition; the limit is a hang guard, not a speed target.
func waitPage(t *testing.T, tab context.Context, cond string, limit time.Duration, what string) {
	t.Helper()
	poll := chromedp.Poll[bool](cond, chromedp.WithPollingInterval(200*time.Millisecond), chromedp.WithPollingTimeout(limit))
	if _, err := chromedp.Run(tab, poll); err != nil {
		cards, b := readPage(t, tab)
		t.Fatalf("%s: %v\nboard: %+v\ncards: %+v", what, err, b, cards)
	}
}

// shotDir is where screenshots go: $SETTLE_TEST_OUTPUT, else the test's temp dir.
func shotDir(t *testing.T) string {
	if d := os.Getenv("SETTLE_TEST_OUTPUT"); d != "" {
		return d
	}
	return t.TempDir()
}

// saveScreenshot writes the visible screen as name.png under shotDir.
func saveScreenshot(t *testing.T, tab context.Context, dir, name string) {
	t.Helper()
	png, err := chromedp.Run(tab, chromedp.CaptureScreenshot())
	if err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(dir, name+".png")
	if err := os.WriteFile(p, png, 0o644); err != nil {
		t.Fatal(err)
	}
	t.Logf("screenshot %s (%d bytes)", p, len(png))
}

// setViewport resizes the tab's page area.
func setViewport(t *testing.T, tab context.Context, w, h int) {
	t.Helper()
	if err := chromedp.Do(tab, chromedp.EmulateViewport(int64(w), int64(h))); err != nil {
		t.Fatal(err)
	}
	time.Sleep(600 * time.Millisecond) // one redraw of the plots (every 400 ms)
}

// checkCommon checks what every card must show whatever its state.
func checkCommon(t *testing.T, c cardView) {
	t.Helper()
	look := map[string][2]string{
		"hot": {"▲", "hot — not yet safe"}, "nearly": {"◆", "nearly there"}, "ready": {"●", "ready to handle (estimate)"},
		"holding": {"◐", "holding"}, "fault": {"✕", "fault"}, "empty": {"○", "empty — no specimen"}, "wait": {"…", "learning the curve"},
		"track": {"—", "tracking"},
	}
	want, ok := look[c.State]
	if !ok {
		t.Errorf("%s: unknown state %q", c.Name, c.State)
		return
	}
	if !strings.Contains(c.Class, "st-"+c.State) || c.Glyph != want[0] || !strings.HasPrefix(c.Word, want[1]) {
		t.Errorf("%s: state %s shown with class %q, glyph %q, word %q", c.Name, c.State, c.Class, c.Glyph, c.Word)
	}
	// The strip is painted in the state's colour (fault is hatched over it, empty is
	// an outline only).
	if c.State != "empty" && c.State != "fault" && c.StripBG != c.StateBG {
		t.Errorf("%s: strip colour %s, the %s colour is %s", c.Name, c.StripBG, c.State, c.StateBG)
	}
	if c.State == "ready" != c.CautionLine {
		t.Errorf("%s: state %s but caution line shown %v", c.Name, c.State, c.CautionLine)
	}
	if strings.Contains(c.Next, "about under") || strings.Contains(c.Next, "NaN") {
		t.Errorf("%s: next line %q", c.Name, c.Next)
	}
}

// checkCautions checks the board's one caution block.
func checkCautions(t *testing.T, b boardView) {
	t.Helper()
	if !b.CautionsShown || len(b.Cautions) != len(predict.HandlingCautions) {
		t.Errorf("caution block shown %v with %d cautions, want %d", b.CautionsShown, len(b.Cautions), len(predict.HandlingCautions))
		return
	}
	for i, c := range predict.HandlingCautions {
		if b.Cautions[i] != c {
			t.Errorf("caution %d: %q, want %q", i, b.Cautions[i], c)
		}
	}
}

// ---- the demo ---------------------------------------------------------------

// everyDemoCard is true once every demo specimen has a forecast and a plot, and at
// least one is ready to handle.
const everyDemoCard = `(() => {
  const cards = [...document.querySelectorAll('.card[data-channel]')];
  return cards.length >= %d && cards.some(c => c.dataset.state === 'ready') && cards.every(c => {
    const cv = c.querySelector('canvas.plot');
    return +(cv.dataset.readings || 0) > 10 && +(cv.dataset.curve || 0) > 10 && c.querySelector('.specimen').textContent.startsWith('S2611-');
  });
})()`

var pageWait = 120 * time.Second

// TestPageShowsDemoForecasts runs the demo daemon and loads the board in headless
// Chromium at three screen sizes: every specimen is a card with its specimen id, a
// state that agrees with the API, a plot and a ticking reading age; the ambient sensor
// is the room in the header, never a card; a ready card has the caution line and the
// board its caution block; the demo badge says 60× time-lapse. Then it stops and starts
// a run from the page, without and with the token.
func TestPageShowsDemoForecasts(t *testing.T) {
	const token = "wall-token-7"
	tab := browser(t, 1400, 1000)
	base, cfg := runDemoDaemon(t, func(c *config.Config) { c.HTTP.Token = token })
	var specimens []string
	var ambient string
	for _, ch := range cfg.Channels {
		if len(ch.Targets) > 0 {
			specimens = append(specimens, ch.Name)
		} else {
			ambient = ch.Name
		}
	}
	if err := chromedp.Do(tab, chromedp.Navigate(base+"/")); err != nil {
		t.Fatal(err)
	}
	// The chime is off until someone turns it on; on, it sounds when a specimen that
	// this screen saw hot becomes ready (the first demo specimen does after ~13 s).
	if err := chromedp.Do(tab, chromedp.WaitVisible("#t-chime")); err != nil {
		t.Fatal(err)
	}
	if on, err := chromedp.Run(tab, chromedp.Evaluate[string](`document.getElementById('t-chime').getAttribute('aria-pressed')`)); err != nil || on != "false" {
		t.Fatalf("chime on at load (%q, %v)", on, err)
	}
	if err := chromedp.Do(tab, chromedp.Click("#t-chime")); err != nil {
		t.Fatal(err)
	}
	waitPage(t, tab, fmt.Sprintf(everyDemoCard, len(specimens)), pageWait, "the page never showed every demo specimen with a plot and one ready")
	waitPage(t, tab, `window.settle.chimes >= 1`, 30*time.Second, "no chime when a specimen became ready")
	dir := shotDir(t)
	for _, vp := range viewports {
		setViewport(t, tab, vp.w, vp.h)
		cards, b := readPage(t, tab)
		api := apiChannels(t, base)
		if len(cards) != len(specimens) {
			t.Fatalf("%s: %d cards, want %d specimens", vp.name, len(cards), len(specimens))
		}
		if !strings.Contains(b.Demo, "60× time-lapse") || len(b.RoomChannels) != 1 || b.RoomChannels[0] != ambient {
			t.Errorf("%s: demo badge %q, room %v (want %s)", vp.name, b.Demo, b.RoomChannels, ambient)
		}
		checkCautions(t, b)
		seenReady := false
		for i, c := range cards {
			checkCommon(t, c)
			checkDemoCard(t, base, c, api[c.Name])
			if c.State == "ready" {
				seenReady = true
			} else if seenReady && i > 0 && cards[i-1].State == "ready" && c.State == "ready" {
				t.Errorf("%s: ready cards are not first", vp.name)
			}
			if c.Right > b.Width+1 {
				t.Errorf("%s: card %s runs off the screen (right %.0f > %.0f)", vp.name, c.Name, c.Right, b.Width)
			}
		}
		if cards[0].State != "ready" {
			t.Errorf("%s: first card is %s (%s); ready specimens come first", vp.name, cards[0].Name, cards[0].State)
		}
		saveScreenshot(t, tab, dir, "demo-"+vp.name)
	}
	setViewport(t, tab, 1920, 1080)
	if err := chromedp.Do(tab, chromedp.Click("#t-theme")); err != nil {
		t.Fatal(err)
	}
	time.Sleep(600 * time.Millisecond)
	saveScreenshot(t, tab, dir, "demo-1920x1080-dark")
	runsFromPage(t, tab, base, specimens[len(specimens)-1], token)
}

// checkDemoCard compares a demo card with the API's view taken just after reading it.
func checkDemoCard(t *testing.T, base string, c cardView, api exporter.ChannelJSON) {
	t.Helper()
	shown, err := strconv.ParseFloat(c.Temp, 64)
	if err != nil || c.Unit != "°C" {
		t.Errorf("%s: temperature %q %q, want a number in °C", c.Name, c.Temp, c.Unit)
		return
	}
	if !amongRecentReadings(t, base, c.Name, shown) {
		t.Errorf("%s: card shows %.1f °C, which is none of the channel's recent readings", c.Name, shown)
	}
	if !regexp.MustCompile(`^\d+ s ago$`).MatchString(c.Age) || c.Link != "ok" || c.LinkText != "logger sending" {
		t.Errorf("%s: reading age %q, logger link %s %q", c.Name, c.Age, c.Link, c.LinkText)
	}
	if !strings.HasPrefix(c.Specimen, "S2611-") {
		t.Errorf("%s: specimen %q, want the run's S2611-…", c.Name, c.Specimen)
	}
	var handling *forecastjson.TargetForecast
	for i := range api.Targets {
		if api.Targets[i].Kind == "handling" {
			handling = &api.Targets[i]
		}
	}
	if handling == nil || handling.Celsius == nil {
		t.Fatalf("%s: API has no handling target: %+v", c.Name, api.Targets)
	}
	switch c.State {
	case "ready":
		// Ready is shown only when the API says reached and the reading is below the
		// target; the demo only cools, so reached stays reached.
		if handling.State != "reached" || shown >= *handling.Celsius {
			t.Errorf("%s: ready at %.1f °C while the API's handling target (%.0f °C) is %s", c.Name, shown, *handling.Celsius, handling.State)
		}
	case "hot", "nearly":
		if shown < *handling.Celsius-2 && handling.State == "predicted" {
			t.Errorf("%s: %s at %.1f °C, below the %.0f °C target", c.Name, c.State, shown, *handling.Celsius)
		}
		if c.NextTarget != "handling" || c.Due == "" || !strings.Contains(c.Next, "90 % interval") {
			t.Errorf("%s: next line %q (target %q, due %q)", c.Name, c.Next, c.NextTarget, c.Due)
		}
	default:
		t.Errorf("%s: state %s in the demo", c.Name, c.State)
	}
	if c.Readings < 10 || c.Curve < 10 || c.Targets != 2 {
		t.Errorf("%s: plot has %d readings, %d curve points, %d target lines", c.Name, c.Readings, c.Curve, c.Targets)
	}
}

// amongRecentReadings reports whether celsius, as shown to one decimal, is one of the
// channel's readings in the last ten minutes of data time. The demo runs at 60×, so
// that is the last ten seconds of wall time: under -race on a busy 2-core machine the
// page's last push can trail the API by more than two (a CI run at load average 7
// showed three cards 2–3 s behind); what is checked is that the card shows a reading,
// not a fitted value.
func amongRecentReadings(t *testing.T, base, channel string, celsius float64) bool {
	t.Helper()
	var s exporter.SeriesResponse
	getJSON(t, base+"/api/v1/channels/"+channel+"/series?from=-10m&max_points=10000", &s)
	for _, r := range s.Readings {
		if math.Abs(r[1]-celsius) < 0.051 {
			return true
		}
	}
	return false
}

func apiChannels(t *testing.T, base string) map[string]exporter.ChannelJSON {
	t.Helper()
	var body exporter.ChannelsResponse
	getJSON(t, base+"/api/v1/channels", &body)
	out := map[string]exporter.ChannelJSON{}
	for _, ch := range body.Channels {
		out[ch.Name] = ch
	}
	return out
}

// activeRun returns the specimen of channel's active run, or "".
func activeRun(t *testing.T, base, channel string) string {
	t.Helper()
	var body struct{ Runs []journal.Run }
	getJSON(t, base+"/api/v1/runs?active=true&channel="+channel, &body)
	if len(body.Runs) == 0 {
		return ""
	}
	return body.Runs[0].Specimen
}

// runsFromPage stops channel's run and starts a new one from the page: first with no
// token (the page asks; cancelling sends nothing), then with a wrong token (refused,
// asked again), then the right one; the stop reuses the token kept in the tab.
func runsFromPage(t *testing.T, tab context.Context, base, channel, token string) {
	t.Helper()
	card := `.card[data-channel="` + channel + `"] `
	was := activeRun(t, base, channel)
	if was == "" {
		t.Fatalf("%s has no active run to stop", channel)
	}
	click := func(sel string) {
		t.Helper()
		if err := chromedp.Do(tab, chromedp.Click(sel)); err != nil {
			t.Fatalf("click %s: %v", sel, err)
		}
	}
	typeIn := func(sel, v string) {
		t.Helper()
		if err := chromedp.Do(tab, chromedp.SetValue(sel, v)); err != nil {
			t.Fatalf("type into %s: %v", sel, err)
		}
	}
	open := func(id string) string { return `document.getElementById('` + id + `').open` }
	// No token: the stop asks for one; cancel sends nothing.
	click(card + ".stop")
	click(card + ".stop") // the second press confirms
	waitPage(t, tab, open("token-dlg"), 10*time.Second, "stop without a token did not ask for one")
	click(`#token-dlg button[value="cancel"]`)
	waitPage(t, tab, `document.getElementById('msg').textContent.includes('Not sent')`, 10*time.Second, "cancelled token: no message")
	if got := activeRun(t, base, channel); got != was {
		t.Fatalf("after a cancelled stop the run on %s is %q, want %q still active", channel, got, was)
	}
	// A wrong token is refused and asked again; the right one stops the run.
	click(card + ".stop")
	click(card + ".stop")
	waitPage(t, tab, open("token-dlg"), 10*time.Second, "stop did not ask for the token")
	typeIn("#token-in", "not-the-token")
	click("#token-ok")
	waitPage(t, tab, `document.getElementById('msg').textContent.includes('refused that token') && document.getElementById('token-dlg').open`, 10*time.Second, "wrong token: not refused and asked again")
	if got := activeRun(t, base, channel); got != was {
		t.Fatalf("a wrong token changed the run on %s to %q", channel, got)
	}
	typeIn("#token-in", token)
	click("#token-ok")
	waitPage(t, tab, `(document.querySelector('`+card+`.start') || {}).hidden === false`, 20*time.Second, "run not shown as stopped")
	if got := activeRun(t, base, channel); got != "" {
		t.Fatalf("run %q still active on %s after the stop", got, channel)
	}
	// Start: the token is kept in the tab, so no question this time.
	click(card + ".start")
	waitPage(t, tab, open("start-dlg"), 10*time.Second, "start dialog did not open")
	typeIn("#start-specimen", "T-77")
	click("#start-ok")
	waitPage(t, tab, `document.querySelector('`+card+`.specimen').textContent === 'T-77'`, 20*time.Second, "started run not shown")
	if got := activeRun(t, base, channel); got != "T-77" {
		t.Fatalf("active run on %s is %q, want T-77", channel, got)
	}
	if open, err := chromedp.Run(tab, chromedp.Evaluate[bool](open("token-dlg"))); err != nil || open {
		t.Errorf("token asked again although the tab keeps it (open %v, %v)", open, err)
	}
}

// TestPageFahrenheit checks that display units F convert on the page while the API
// stays in °C.
func TestPageFahrenheit(t *testing.T) {
	tab := browser(t, 800, 1000) // a tablet-sized window
	base, _ := runDemoDaemon(t, func(c *config.Config) { c.Display.Units = "F" })
	if err := chromedp.Do(tab, chromedp.Navigate(base+"/")); err != nil {
		t.Fatal(err)
	}
	waitPage(t, tab, `[...document.querySelectorAll('.temp')].some(e => e.dataset.celsius)`, 60*time.Second, "no temperature shown")
	cards, b := readPage(t, tab)
	checked := 0
	for _, c := range cards {
		if c.Celsius == "" {
			continue
		}
		cel, _ := strconv.ParseFloat(c.Celsius, 64)
		shown, err := strconv.ParseFloat(c.Temp, 64)
		// °F = °C × 9/5 + 32, shown to one decimal.
		if err != nil || c.Unit != "°F" || math.Abs(shown-(cel*9/5+32)) > 0.051 {
			t.Errorf("%s: shows %q %q for %s °C", c.Name, c.Temp, c.Unit, c.Celsius)
		}
		checked++
	}
	if checked == 0 {
		t.Error("no card had a temperature")
	}
	if !strings.Contains(b.Room, "°F") {
		t.Errorf("room shows %q, want °F", b.Room)
	}
}

// ---- a hand-made board --------------------------------------------------------

const boardToken = "bench-token-3"

// boardFixture serves the real page and a real runs API (on a journal in a temp dir)
// with a hand-made channel list: 15 positions in every state the board knows and two
// ambient sensors, as the daemon's API describes them (role, due and the empty state
// included). Data time is now, so ages and "today" are real.
func boardFixture(t *testing.T, now time.Time, extra ...map[string]any) (string, *fixtureAcks) {
	t.Helper()
	j, err := journal.Open(t.TempDir(), journal.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { j.Close() })
	for _, r := range [][2]string{{"p01-ready", "B7-101"}, {"p02-above", "B7-102"}, {"p03-nearly", "B7-103"}, {"p04-hot", "B7-104"}, {"p05-rough", "B7-105"}} {
		if _, err := j.StartRun(journal.RunSpec{Channel: r[0], Specimen: r[1], Start: now.Add(-40 * time.Minute)}); err != nil {
			t.Fatal(err)
		}
	}
	// p04's run is in the journal from its start; the daemon's memory (the series)
	// holds only its last ten minutes, as after a restart or a reload.
	for i := 0; i <= 240; i++ {
		at := now.Add(-40*time.Minute + time.Duration(i*10)*time.Second)
		j.Append(daq.Reading{Channel: "p04-hot", Logger: "bench1", Time: at, Celsius: boardCurve(183, now.Sub(at)), Status: daq.StatusOK})
	}
	if err := j.Flush(); err != nil {
		t.Fatal(err)
	}
	channels := append(boardChannels(now), extra...)
	mux := http.NewServeMux()
	runs := runs.API(j, runs.APIOptions{Token: boardToken})
	mux.Handle("/api/v1/runs", runs)
	mux.Handle("/api/v1/runs/", runs)
	acks := &fixtureAcks{byChannel: map[string]map[string]any{}}
	mux.HandleFunc("GET /api/v1/channels", func(w http.ResponseWriter, r *http.Request) {
		httpjson.Write(w, http.StatusOK, map[string]any{"generated_at": time.Now().UTC(), "channels": acks.apply(channels)})
	})
	// The daemon's acknowledge endpoint is tested in exporter (TestAcknowledge); here it
	// checks the token and keeps the acknowledgement, as the daemon does, so that the
	// page's request, its answer and a second screen can be seen.
	mux.HandleFunc("POST /api/v1/channels/{name}/acknowledge", func(w http.ResponseWriter, r *http.Request) {
		if r.Header.Get("Authorization") != "Bearer "+boardToken {
			httpjson.Write(w, http.StatusForbidden, httpjson.Error{Error: "wrong token"})
			return
		}
		httpjson.Write(w, http.StatusOK, acks.add(r.PathValue("name"), now))
	})
	mux.HandleFunc("GET /api/v1/channels/{name}", func(w http.ResponseWriter, r *http.Request) {
		httpjson.Write(w, http.StatusOK, map[string]any{"name": r.PathValue("name"), "last_received": time.Now().Add(-12 * time.Second).UTC()})
	})
	mux.HandleFunc("GET /api/v1/channels/{name}/series", func(w http.ResponseWriter, r *http.Request) {
		httpjson.Write(w, http.StatusOK, boardSeries(r.PathValue("name"), channels, now))
	})
	mux.HandleFunc("GET /api/v1/events", func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Content-Type", "text/event-stream")
		b, _ := json.Marshal(map[string]any{"generated_at": time.Now().UTC(), "channels": acks.apply(channels)})
		fmt.Fprintf(w, "event: channels\ndata: %s\n\n", b)
		w.(http.Flusher).Flush()
		<-r.Context().Done()
	})
	page := exporter.NewHandler(exporter.State{}, prometheus.NewRegistry(), exporter.Options{})
	mux.Handle("GET /{$}", page)
	mux.Handle("GET /static/", page)
	srv := httptest.NewServer(mux)
	t.Cleanup(srv.Close)
	return srv.URL, acks
}

// boardChannels is the hand-made channel list. Times are RFC 3339; a handling target's
// due is its interval's late bound.
func boardChannels(now time.Time) []map[string]any {
	at := func(d time.Duration) string { return now.Add(d).UTC().Format(time.RFC3339) }
	reading := func(c float64) map[string]any {
		return map[string]any{"time": at(-2 * time.Second), "celsius": c, "status": "ok"}
	}
	fit := func(notes ...string) map[string]any {
		return map[string]any{"model": "lumped", "points": 400, "notes": append([]string{"The ambient is measured, not fitted."}, notes...), "out_of_range": false}
	}
	handling := func(state string, at_, early, late string, due bool) map[string]any {
		t := map[string]any{"name": "handling", "kind": "handling", "celsius": 50.0, "state": state}
		if at_ != "" {
			t["at"], t["earliest"], t["latest"] = at_, early, late
			if due {
				t["due"] = late
			}
		}
		return t
	}
	settled := map[string]any{"name": "settled", "kind": "settle", "celsius": 23.0, "state": "predicted", "at": at(3 * time.Hour), "earliest": at(150 * time.Minute), "latest": at(200 * time.Minute), "due": at(3 * time.Hour)}
	pos := func(name string, latest map[string]any, f map[string]any, fault map[string]any, targets ...map[string]any) map[string]any {
		if targets == nil {
			targets = []map[string]any{}
		}
		return map[string]any{"name": name, "role": "position", "ambient": "room-a", "latest": latest, "forecast": f, "targets": targets, "fault": fault}
	}
	mismatch := "Model mismatch: the residuals have a smooth structure of 0.8 K rms beside 0.1 K of noise, so the curve is not the model's shape; intervals are widened for it — treat the forecast as rough."
	chs := []map[string]any{
		pos("p01-ready", reading(41.2), fit(), nil, handling("reached", at(-5*time.Minute), at(-5*time.Minute), at(-5*time.Minute), true), settled),
		pos("p02-above", reading(55.4), fit(), nil, handling("reached", at(-time.Minute), at(-time.Minute), at(-time.Minute), true), settled),
		pos("p03-nearly", reading(57.9), fit(), nil, handling("predicted", at(4*time.Minute), at(2*time.Minute), at(6*time.Minute), true), settled),
		pos("p04-hot", reading(183.0), fit(), nil, handling("predicted", at(30*time.Minute), at(20*time.Minute), at(45*time.Minute), true), settled),
		pos("p05-rough", reading(120.5), fit(mismatch), nil, handling("predicted", at(50*time.Minute), at(35*time.Minute), at(70*time.Minute), true), settled),
		pos("p06-empty", reading(21.6), nil, nil, handling("empty", "", "", "", false)),
		// An older page contract: only the channel's flag says empty.
		pos("p15-flag", reading(22.1), nil, nil, handling("insufficient", "", "", "", false)),
		pos("p07-port", reading(88.0), fit(), map[string]any{"kind": "port_down", "since": at(-3 * time.Minute), "detail": "logger bench1: port /dev/ttyUSB7 is not open; settle keeps retrying"}, handling("predicted", at(20*time.Minute), at(15*time.Minute), at(25*time.Minute), true)),
		pos("p08-open", map[string]any{"time": at(-2 * time.Second), "celsius": nil, "status": "open"}, nil, map[string]any{"kind": "open", "since": at(-time.Minute), "detail": "open thermocouple: check the wire and the connector"}, handling("insufficient", "", "", "", false)),
		pos("p09-hold", reading(850.2), fit(), nil, map[string]any{"name": "soak", "kind": "hold", "celsius": 850.0, "state": "holding", "at": at(25 * time.Minute), "earliest": at(25 * time.Minute), "latest": at(25 * time.Minute), "due": at(25 * time.Minute)}),
		pos("p10-nodata", nil, nil, nil, handling("insufficient", "", "", "", false)),
		pos("p11-slow", reading(420.0), fit(), nil, handling("predicted", at(26*time.Hour), at(22*time.Hour), at(30*time.Hour), true)),
		pos("p12-learning", reading(95.0), nil, nil, handling("insufficient", "", "", "", false)),
		// Before the API had "due": the page plans with the late bound.
		pos("p13-nodue", reading(140.0), fit(), nil, handling("predicted", at(60*time.Minute), at(50*time.Minute), at(75*time.Minute), false)),
		{"name": "room-a", "role": "ambient", "latest": reading(21.4), "forecast": nil, "targets": []any{}, "fault": nil},
		// No role (an older daemon): ambient because p14 names it so.
		{"name": "room-b", "latest": reading(22.9), "forecast": nil, "targets": []any{}, "fault": nil},
		{"name": "p14-oldapi", "ambient": "room-b", "latest": reading(66.0), "forecast": fit(), "fault": nil,
			"targets": []any{handling("predicted", at(7*time.Minute), at(5*time.Minute), at(9*time.Minute), false)}},
	}
	for _, ch := range chs {
		if ch["name"] == "p06-empty" || ch["name"] == "p15-flag" {
			ch["empty"] = true
		}
	}
	return chs
}

// boardSeries is a cooling curve for a channel's chart: readings over the last 40
// minutes ending at its newest reading, and the same curve as the fit.
func boardSeries(name string, channels []map[string]any, now time.Time) map[string]any {
	out := map[string]any{"channel": name, "readings": [][2]float64{}, "curve": [][2]float64{}, "faults": []any{}, "targets": []any{}}
	for _, ch := range channels {
		if ch["name"] != name {
			continue
		}
		latest, _ := ch["latest"].(map[string]any)
		end, ok := 0.0, false
		if latest != nil {
			end, ok = latest["celsius"].(float64)
		}
		if !ok {
			return out
		}
		keep := 40 * time.Minute
		if name == "p04-hot" {
			keep = 10 * time.Minute
		}
		var rs, cs [][2]float64
		for s := keep; s >= 0; s -= 10 * time.Second {
			rs = append(rs, [2]float64{float64(now.Add(-s).UnixMilli()), math.Round(boardCurve(end, s)*1000) / 1000})
		}
		for s := 40 * time.Minute; s >= -80*time.Minute; s -= time.Minute {
			cs = append(cs, [2]float64{float64(now.Add(-s).UnixMilli()), boardCurve(end, s)})
		}
		out["readings"], out["curve"] = rs, cs
		if name == "p05-rough" { // a surface sensor: the series carries the estimated centre
			var centre [][2]float64
			for _, c := range cs {
				centre = append(centre, [2]float64{c[0], c[1] + 12})
			}
			out["centre"] = centre
		}
	}
	return out
}

// boardCurve is a cooling curve toward 21 °C with a 30-minute time constant that reads
// end °C now, ago before now.
func boardCurve(end float64, ago time.Duration) float64 {
	const amb, tau = 21.0, 30 * 60.0
	return amb + (end-amb)*math.Exp(ago.Seconds()/tau)
}

// TestBoardStates loads the hand-made board at three screen sizes and checks each card:
// its state, colour class, glyph and words, the due time with its date where it is not
// today, the logger link apart from the browser's connection, the notes in plain words,
// the ready card's caution line, the empty position, the room; every position visible
// at 1920×1080; the board sorted by what is due next. Then it starts and stops a run
// from the page with and without the token.
func TestBoardStates(t *testing.T) {
	now := time.Now().UTC().Truncate(time.Second)
	base, acks := boardFixture(t, now)
	tab := browser(t, 1920, 1080)
	if err := chromedp.Do(tab, chromedp.Navigate(base+"/")); err != nil {
		t.Fatal(err)
	}
	waitPage(t, tab, `document.querySelectorAll('.card[data-channel]').length === 15 && document.querySelector('.card[data-channel="p01-ready"] .specimen').textContent === 'B7-101' && /s ago/.test(document.querySelector('.card[data-channel="p04-hot"] .age').textContent)`,
		30*time.Second, "the hand-made board never loaded")
	hm := func(d time.Duration) string { return pageWhen(now.Add(d), now) }
	// interval is "a–b" as the page writes it: b without its date when on a's day.
	interval := func(a, b time.Duration) string {
		ta, tb := now.Add(a), now.Add(b)
		if ta.YearDay() == tb.YearDay() {
			return hm(a) + "–" + pageWhen(tb, tb)
		}
		return hm(a) + "–" + hm(b)
	}
	dir := shotDir(t)
	fullBottom := 0.0 // where the full board ends at 1920×1080
	for _, vp := range viewports {
		setViewport(t, tab, vp.w, vp.h)
		cards, b := readPage(t, tab)
		byName := map[string]cardView{}
		var order []string
		for _, c := range cards {
			checkCommon(t, c)
			byName[c.Name] = c
			order = append(order, c.Name)
			if vp.w == 1920 {
				fullBottom = math.Max(fullBottom, c.Bottom)
			}
			if vp.w == 1920 && (c.Bottom > b.Height+0.5 || c.Right > b.Width+0.5) {
				t.Errorf("1920x1080: %s is off the screen (bottom %.0f, right %.0f)", c.Name, c.Bottom, c.Right)
			}
		}
		checkCautions(t, b)
		if len(b.RoomChannels) != 2 || !strings.Contains(b.Room, "21.4") || !strings.Contains(b.Room, "22.9") {
			t.Errorf("%s: room %q %v, want room-a 21.4 and room-b 22.9 °C", vp.name, b.Room, b.RoomChannels)
		}
		if b.Conn != "live" || b.Demo != "" {
			t.Errorf("%s: browser connection %q, demo badge %q", vp.name, b.Conn, b.Demo)
		}
		for _, w := range []struct {
			name, state, text string
		}{
			{"p01-ready", "ready", "Below 50.0 °C since " + hm(-5*time.Minute)},
			{"p02-above", "hot", "readings do not yet"},
			{"p03-nearly", "nearly", "Below 50.0 °C by " + hm(6*time.Minute)},
			{"p04-hot", "hot", "by " + hm(45*time.Minute) + " (in 45 min)likely " + hm(30*time.Minute) + " · 90 % interval " + interval(20*time.Minute, 45*time.Minute)},
			{"p05-rough", "hot", "by " + hm(70*time.Minute)},
			{"p06-empty", "empty", "Place a specimen"},
			{"p15-flag", "empty", "Place a specimen"},
			{"p07-port", "fault", "port /dev/ttyUSB7 is not open"},
			{"p08-open", "fault", "open thermocouple"},
			{"p09-hold", "holding", "held until " + hm(25*time.Minute)},
			{"p10-nodata", "wait", "Learning the curve"},
			{"p11-slow", "hot", "by " + hm(30*time.Hour)},
			{"p12-learning", "hot", "Learning the curve"},
			{"p13-nodue", "hot", "by " + hm(75*time.Minute)},
			{"p14-oldapi", "nearly", "by " + hm(9*time.Minute)},
		} {
			c, ok := byName[w.name]
			if !ok {
				t.Errorf("%s: no card %s", vp.name, w.name)
				continue
			}
			if c.State != w.state || !strings.Contains(c.Next, w.text) {
				t.Errorf("%s: %s is %s %q, want %s with %q", vp.name, w.name, c.State, c.Next, w.state, w.text)
			}
		}
		if c := byName["p01-ready"]; !c.CautionLine || !c.Ack || c.Specimen != "B7-101" {
			t.Errorf("%s: ready card: caution line %v, acknowledge %v, specimen %q", vp.name, c.CautionLine, c.Ack, c.Specimen)
		}
		if c := byName["p06-empty"]; c.Word != "empty — no specimen" || c.Specimen != "" {
			t.Errorf("%s: empty position says %q, specimen %q", vp.name, c.Word, c.Specimen)
		}
		if c := byName["p07-port"]; c.Link != "port_down" || !strings.Contains(c.LinkText, "logger port lost") || c.Word != "fault — logger port lost" {
			t.Errorf("%s: lost port: link %s %q, word %q", vp.name, c.Link, c.LinkText, c.Word)
		}
		if c := byName["p10-nodata"]; c.Link != "none" || !strings.Contains(c.LinkText, "check the logger's port") || c.Temp != "—" {
			t.Errorf("%s: no data: link %s %q, temp %q", vp.name, c.Link, c.LinkText, c.Temp)
		}
		if c := byName["p05-rough"]; len(c.Notes) != 1 || !strings.HasPrefix(c.Notes[0], "Rough forecast") || c.Centre != 121 || byName["p04-hot"].Centre != 0 {
			t.Errorf("%s: model-mismatch notes %q; centre curve %d points (want 121), p04 %d (want 0)", vp.name, c.Notes, c.Centre, byName["p04-hot"].Centre)
		}
		if c := byName["p04-hot"]; c.Age != "12 s ago" && c.Age != "13 s ago" && c.Age != "14 s ago" {
			// The fixture says the reading arrived 12 s before the detail request.
			if !regexp.MustCompile(`^\d+ s ago$`).MatchString(c.Age) {
				t.Errorf("%s: reading age %q", vp.name, c.Age)
			}
		}
		// Sorted by what is due next: ready, faults, nearly (by due), hot (by due), …
		if got := strings.Join(order[:3], " "); got != "p01-ready p07-port p08-open" {
			t.Errorf("%s: board starts %s", vp.name, got)
		}
		if idx(order, "p03-nearly") > idx(order, "p14-oldapi") || idx(order, "p14-oldapi") > idx(order, "p04-hot") ||
			idx(order, "p04-hot") > idx(order, "p05-rough") || idx(order, "p05-rough") > idx(order, "p13-nodue") || (order[len(order)-1] != "p06-empty" && order[len(order)-1] != "p15-flag") {
			t.Errorf("%s: board order %v", vp.name, order)
		}
		// History: p04's chart reaches back to its run's start through the journal.
		if c := byName["p04-hot"]; c.Journal < 100 || c.Readings < c.Journal+50 {
			t.Errorf("%s: p04's chart has %d readings, %d of them from the journal; want the run's 40 minutes", vp.name, c.Readings, c.Journal)
		}
		saveScreenshot(t, tab, dir, "board-"+vp.name)
	}
	// Compact mode fits many benches; the ready card keeps its caution line.
	setViewport(t, tab, 1920, 1080)
	if err := chromedp.Do(tab, chromedp.Click("#t-compact")); err != nil {
		t.Fatal(err)
	}
	time.Sleep(300 * time.Millisecond)
	cards, _ := readPage(t, tab)
	for _, c := range cards {
		if c.Bottom > 0.7*fullBottom {
			t.Errorf("compact: %s ends at %.0f px; the full board ends at %.0f px, want compact within 70 %% of that", c.Name, c.Bottom, fullBottom)
		}
		if c.Name == "p01-ready" && !c.CautionLine {
			t.Error("compact: the ready card lost its caution line")
		}
	}
	saveScreenshot(t, tab, dir, "board-1920x1080-compact")
	if err := chromedp.Do(tab, chromedp.Click("#t-compact")); err != nil {
		t.Fatal(err)
	}
	// Start and stop from the page: p04's run is stopped, a new one started.
	runsFromPage(t, tab, base, "p04-hot", boardToken)
	// Acknowledge (with the token the tab now keeps) goes to the daemon: the ready card
	// says so and moves below the other alerts, on this screen and on a fresh one.
	if err := chromedp.Do(tab, chromedp.Click(`.card[data-channel="p01-ready"] .ack`)); err != nil {
		t.Fatal(err)
	}
	waitPage(t, tab, `document.querySelector('.card[data-channel="p01-ready"] .next').textContent.includes('acknowledged')`, 10*time.Second, "acknowledge: the card never said so")
	if got := acks.count(); got != 1 {
		t.Errorf("acknowledge sent %d requests to the daemon, want 1", got)
	}
	for _, screen := range []string{"this screen", "a fresh screen"} {
		if screen == "a fresh screen" {
			if err := chromedp.Do(tab, chromedp.Reload()); err != nil {
				t.Fatal(err)
			}
			waitPage(t, tab, `document.querySelectorAll('.card[data-channel]').length === 15 && document.querySelector('.card[data-channel="p01-ready"] .specimen').textContent === 'B7-101'`, 30*time.Second, "reload: the board never loaded")
		}
		cards, _ = readPage(t, tab)
		c := cards[idxCard(cards, "p01-ready")]
		if cards[0].Name == "p01-ready" || !strings.Contains(c.Class, "st-ready") || c.Ack || !strings.Contains(c.Next, "acknowledged") {
			t.Errorf("%s after acknowledging: board starts with %s; p01 class %q, button shown %v, says %q", screen, cards[0].Name, c.Class, c.Ack, c.Next)
		}
	}
	saveScreenshot(t, tab, dir, "board-1920x1080-acknowledged")
}

// TestBoardNotBeforeOnly: a position whose only forecast is an early bound for a
// non-handling target (an oven warm-up without its set point: the readings still move
// away from the room, so settle gives "not before" and no time, and nothing for the
// handling target) says that bound on its card, not "learning the curve" nor "no target
// ahead", and plans nothing with it.
func TestBoardNotBeforeOnly(t *testing.T) {
	now := time.Now().UTC().Truncate(time.Second)
	at := func(d time.Duration) string { return now.Add(d).UTC().Format(time.RFC3339) }
	oven := func(name string, handling bool) map[string]any {
		targets := []map[string]any{{"name": "test", "kind": "temperature", "celsius": 180.0, "state": "predicted", "at": nil, "earliest": at(40 * time.Minute), "latest": nil, "due": nil}}
		if handling {
			targets = append(targets, map[string]any{"name": "handling", "kind": "handling", "celsius": 50.0, "state": "insufficient"})
		}
		return map[string]any{"name": name, "role": "position", "latest": map[string]any{"time": at(-2 * time.Second), "celsius": 140.0, "status": "ok"},
			"forecast": map[string]any{"model": "lumped", "points": 400, "notes": []string{}, "out_of_range": false}, "targets": targets, "fault": nil}
	}
	base, _ := boardFixture(t, now, oven("p16-oven", true), oven("p17-oven", false))
	tab := browser(t, 1400, 1000)
	if err := chromedp.Do(tab, chromedp.Navigate(base+"/")); err != nil {
		t.Fatal(err)
	}
	waitPage(t, tab, `document.querySelectorAll('.card[data-channel]').length === 17`, 30*time.Second, "the board never loaded")
	cards, _ := readPage(t, tab)
	hm := pageWhen(now.Add(40*time.Minute), now)
	seen := 0
	for _, c := range cards {
		if c.Name != "p16-oven" && c.Name != "p17-oven" {
			continue
		}
		seen++
		checkCommon(t, c)
		want, state := "test · 180.0 °C not before "+hm+"no time yet", map[string]string{"p16-oven": "hot", "p17-oven": "track"}[c.Name]
		if c.State != state || !strings.Contains(c.Next, want) || strings.Contains(c.Next, "Learning") {
			t.Errorf("%s is %s %q, want %s with %q", c.Name, c.State, c.Next, state, want)
		}
	}
	if seen != 2 {
		t.Errorf("saw %d of the two oven cards", seen)
	}
	saveScreenshot(t, tab, shotDir(t), "board-not-before-only")
}

// pageWhen is a clock time as the page writes it (app.js, when): with the date when t
// falls on another day than ref, the latest reading's. Tests that build their times
// from the wall clock use it so they hold within hours of midnight; the browser runs in
// UTC, so both must be UTC.
func pageWhen(t, ref time.Time) string {
	s := fmt.Sprintf("%d:%02d", t.Hour(), t.Minute())
	if t.YearDay() != ref.YearDay() || t.Year() != ref.Year() {
		s = fmt.Sprintf("%d %s %s", t.Day(), t.Format("Jan"), s)
	}
	return s
}

// fixtureAcks keeps the board fixture's acknowledgements, as the daemon's API shows them.
type fixtureAcks struct {
	mu        sync.Mutex
	byChannel map[string]map[string]any
	n         int
}

func (a *fixtureAcks) add(name string, now time.Time) map[string]any {
	a.mu.Lock()
	defer a.mu.Unlock()
	a.n++
	ack := map[string]any{"channel": name, "segment_start": now.Add(-40 * time.Minute).UTC(), "at": now.UTC()}
	a.byChannel[name] = ack
	return ack
}

func (a *fixtureAcks) count() int {
	a.mu.Lock()
	defer a.mu.Unlock()
	return a.n
}

// apply returns channels with each one's acknowledgement (copies; channels is shared).
func (a *fixtureAcks) apply(channels []map[string]any) []map[string]any {
	a.mu.Lock()
	defer a.mu.Unlock()
	out := make([]map[string]any, len(channels))
	for i, c := range channels {
		cp := maps.Clone(c)
		if ack, ok := a.byChannel[fmt.Sprint(c["name"])]; ok {
			cp["acknowledged"] = ack
		}
		out[i] = cp
	}
	return out
}

func idx(s []string, v string) int {
	for i, x := range s {
		if x == v {
			return i
		}
	}
	return -1
}

func idxCard(cs []cardView, name string) int {
	for i, c := range cs {
		if c.Name == name {
			return i
		}
	}
	return 0
}

// TestPageKeepsHistoryAfterRestart runs the demo, stops the daemon and starts a new one
// on the same journal with a logger that sends nothing: the new daemon's memory holds
// one reading per channel, yet the page's charts show the whole run from the journal.
func TestPageKeepsHistoryAfterRestart(t *testing.T) {
	log := slog.New(slog.NewTextHandler(io.Discard, nil))
	dir := t.TempDir()
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	cfg, stopSim, err := startDemo(ctx, log)
	if err != nil {
		t.Fatal(err)
	}
	cfg.DataDir, cfg.Listen = dir, "127.0.0.1:0"
	first, err := newDaemon(cfg, log)
	if err != nil {
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() { done <- first.Run(ctx) }()
	waitFor(t, "http://"+first.Addr(), 60*time.Second, func(m map[string]float64) bool {
		return m[`settle_fit_points{channel="steel-cyl-a"}`] >= 200
	})
	cancel()
	if err := <-done; err != nil {
		t.Fatalf("first daemon: %v", err)
	}
	stopSim()
	silent, err := sim.OpenPTY()
	if err != nil {
		t.Fatal(err)
	}
	defer silent.Close()
	cfg2 := sim.DemoScenario().DemoConfig(silent.Path())
	cfg2.DataDir = dir
	base := startDaemon(t, &cfg2)
	var s exporter.SeriesResponse
	getJSON(t, base+"/api/v1/channels/steel-cyl-a/series", &s)
	tab := browser(t, 1400, 1000)
	if err := chromedp.Do(tab, chromedp.Navigate(base+"/")); err != nil {
		t.Fatal(err)
	}
	// Each chart loads its run from the journal on its own request: wait for all of them
	// (a busy machine answers them one by one), then check each.
	waitPage(t, tab, `(() => { const cs = [...document.querySelectorAll('.card[data-channel] canvas.plot')]; return cs.length > 0 && cs.every((c) => +c.dataset.journal > 100); })()`,
		60*time.Second, "the charts never loaded their runs from the journal")
	cards, _ := readPage(t, tab)
	for _, c := range cards {
		if c.Journal < 100 || c.Readings <= len(s.Readings) {
			t.Errorf("%s: chart has %d readings (%d from the journal); the daemon's memory has %d", c.Name, c.Readings, c.Journal, len(s.Readings))
		}
	}
	saveScreenshot(t, tab, shotDir(t), "restart-1400x1000")
}

// TestBoardHandMadeConfig runs a daemon on a hand-made configuration: a text-line logger
// on a pseudo-terminal that this test feeds (a specimen cooling from 120 °C on "pos-a",
// run HM-1, and the room sensor), and a second logger whose port does not exist ("pos-c").
// The board must show pos-a hot, then ready with its caution line once the API says
// reached and the reading is below 50 °C; the room in the header, not as a card; and
// pos-c as waiting with the logger's link in doubt, never ready.
func TestBoardHandMadeConfig(t *testing.T) {
	p, err := sim.OpenPTY()
	if err != nil {
		t.Fatal(err)
	}
	defer p.Close()
	handling := 50.0
	target := []config.Target{{Name: "handling", Celsius: &handling, Handling: true}}
	cfg := &config.Config{
		Loggers: []config.Logger{
			{Logger: daq.Logger{Name: "bench1", Port: p.Path(), Format: "line", Line: daq.LineFormat{Separator: ",", ClockColumn: 1,
				Columns: []daq.Column{{Index: 2, Channel: "pos-a"}, {Index: 3, Channel: "room"}}}}},
			{Logger: daq.Logger{Name: "bench2", Port: "/dev/settle-test-no-such-port", Format: "line", Line: daq.LineFormat{Separator: ",",
				Columns: []daq.Column{{Index: 1, Channel: "pos-c"}}}}},
		},
		Channels: []config.Channel{
			{Name: "pos-a", Ambient: "room", Targets: target, Run: &config.Run{Specimen: "HM-1"}},
			{Name: "pos-c", Ambient: "room", Targets: target},
			{Name: "room"},
		},
	}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	// A 99 K step cooling with a 1600 s time constant: below 50 °C after about 1965 s.
	// 2 s of logger time every 1/30 s of wall time (a 60× time-lapse), except that from
	// 200 s of logger time (about 107 °C, handling due in some 29 min) the logger crawls
	// at real time until the page has shown the specimen hot: a browser slow to start on
	// a busy machine must not miss the hot state.
	var shownHot atomic.Bool
	go func() {
		tick := time.NewTicker(time.Second / 30)
		defer tick.Stop()
		for s := 0.0; ; {
			line := fmt.Sprintf("%.1f,%.2f,%.2f\n", s, 21+99*math.Exp(-s/1600), 21.0+0.05*math.Sin(s/60))
			if _, err := p.Write([]byte(line)); err != nil {
				return
			}
			select {
			case <-ctx.Done():
				return
			case <-tick.C:
			}
			if s < 200 || shownHot.Load() {
				s += 2
			} else {
				s += 1.0 / 30
			}
		}
	}()
	base := startDaemon(t, cfg)
	tab := browser(t, 1400, 1000)
	if err := chromedp.Do(tab, chromedp.Navigate(base+"/")); err != nil {
		t.Fatal(err)
	}
	dir := shotDir(t)
	waitPage(t, tab, `(document.querySelector('.card[data-channel="pos-a"]') || {dataset: {}}).dataset.state === 'hot' && document.querySelector('.card[data-channel="pos-a"] .specimen').textContent === 'HM-1'`,
		60*time.Second, "pos-a never shown hot with its run")
	saveScreenshot(t, tab, dir, "handmade-hot")
	shownHot.Store(true)
	waitPage(t, tab, `document.querySelector('.card[data-channel="pos-a"]').dataset.state === 'ready'`, 90*time.Second, "pos-a never shown ready")
	cards, b := readPage(t, tab)
	api := apiChannels(t, base)
	byName := map[string]cardView{}
	for _, c := range cards {
		checkCommon(t, c)
		byName[c.Name] = c
	}
	checkCautions(t, b)
	if len(cards) != 2 || len(b.RoomChannels) != 1 || b.RoomChannels[0] != "room" {
		t.Errorf("cards %d (want pos-a and pos-c), room %v", len(cards), b.RoomChannels)
	}
	a := byName["pos-a"]
	shown, _ := strconv.ParseFloat(a.Temp, 64)
	if h := api["pos-a"].Targets; len(h) != 1 || h[0].State != "reached" || shown >= 50 || !a.CautionLine || a.Specimen != "HM-1" {
		t.Errorf("pos-a ready at %q °C with API targets %+v, caution line %v, specimen %q", a.Temp, h, a.CautionLine, a.Specimen)
	}
	// A port that never opened is the API's port_down fault, shown as such.
	if c := byName["pos-c"]; c.State != "fault" || c.Link != "port_down" || c.Temp != "—" {
		t.Errorf("pos-c (missing port): state %s, link %s %q, temperature %q", c.State, c.Link, c.LinkText, c.Temp)
	}
	saveScreenshot(t, tab, dir, "handmade-ready")
}
