package main

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/exporter"
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

// browser starts headless chromium for the test and returns a tab context.
func browser(t *testing.T, width, height int) context.Context {
	t.Helper()
	opts := []chromedp.ExecAllocatorOption{
		chromedp.ExecPath(chromium(t)), chromedp.Headless, chromedp.NoFirstRun, chromedp.NoDefaultBrowserCheck,
		chromedp.Flag("no-sandbox", true), chromedp.DisableGPU, chromedp.Flag("disable-quic", true),
		chromedp.Flag("disable-background-networking", true), chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true), chromedp.Flag("disable-dev-shm-usage", true),
		chromedp.UserDataDir(t.TempDir()), chromedp.WindowSize(width, height),
	}
	actx, cancelAlloc := chromedp.NewExecAllocator(context.Background(), opts...)
	ctx, cancel := chromedp.NewContext(actx)
	t.Cleanup(func() { cancel(); cancelAlloc() })
	return ctx
}

// cardView is what the page shows on one card, read from the DOM.
type cardView struct {
	Name, Temp, Unit, Celsius, Model, Fault, Headline string
	Targets                                           []struct{ Name, State, At, Text string }
	Ready                                             bool
	Cautions                                          int
	Readings, Curve, TargetLines                      int
	Inked                                             int
}

const readCards = `[...document.querySelectorAll('.card[data-channel]')].map(c => {
  const cv = c.querySelector('canvas.plot');
  let inked = 0;
  if (cv.width) {
    const d = cv.getContext('2d').getImageData(0, 0, cv.width, cv.height).data;
    for (let i = 3; i < d.length; i += 16) if (d[i] > 0) inked++;
  }
  return {
    Name: c.dataset.channel, Temp: c.querySelector('.temp').textContent,
    Unit: c.querySelector('.unit').textContent, Celsius: c.querySelector('.temp').dataset.celsius || '',
    Model: c.querySelector('.model').textContent, Fault: c.dataset.fault || '',
    Headline: c.querySelector('.headline').textContent,
    Targets: [...c.querySelectorAll('.targets li')].map(li => ({Name: li.dataset.target, State: li.dataset.state, At: li.dataset.at, Text: li.textContent})),
    Ready: !c.querySelector('.ready').hidden, Cautions: c.querySelectorAll('.ready li').length,
    Readings: +(cv.dataset.readings || 0), Curve: +(cv.dataset.curve || 0), TargetLines: +(cv.dataset.targets || 0),
    Inked: inked,
  };
})`

// everyCardForecast is true once every specimen card (those with a handling target)
// has a handling forecast, or has reached it, and a plot with readings, a fitted curve
// and both target lines, and at least one is ready to handle; a card without targets
// (the ambient sensor) needs readings.
const everyCardForecast = `(() => {
  const cards = [...document.querySelectorAll('.card[data-channel]')];
  // At least one specimen ready too, so the screenshot shows the cautions.
  return cards.length >= %d && cards.some(c => !c.querySelector('.ready').hidden) && cards.every(c => {
    const h = c.querySelector('.targets li[data-target="handling"]');
    const cv = c.querySelector('canvas.plot');
    if (!c.querySelector('.targets li')) return +(cv.dataset.readings || 0) > 10;
    return h && (h.dataset.state === 'predicted' || h.dataset.state === 'reached') &&
      +(cv.dataset.readings || 0) > 10 && +(cv.dataset.curve || 0) > 10 && +(cv.dataset.targets || 0) === 2;
  });
})()`

var pageWait = 120 * time.Second

// TestPageShowsDemoForecasts loads the status page in headless Chromium against a
// daemon running the demo, waits for every specimen's forecast, checks each card and
// plot against the API, and saves a screenshot.
func TestPageShowsDemoForecasts(t *testing.T) {
	tab := browser(t, 1400, 1000)
	base, cfg := runDemoDaemon(t, nil)
	var specimens []string // the ambient sensor is the room, not a card
	for _, ch := range cfg.Channels {
		if len(ch.Targets) > 0 {
			specimens = append(specimens, ch.Name)
		}
	}
	if err := chromedp.Do(tab, chromedp.Navigate(base+"/")); err != nil {
		t.Fatal(err)
	}
	// The wait is a hang guard, not a speed assertion (the demo forecasts within ~50 s).
	poll := chromedp.Poll[bool](fmt.Sprintf(everyCardForecast, len(specimens)),
		chromedp.WithPollingInterval(250*time.Millisecond), chromedp.WithPollingTimeout(pageWait))
	if _, err := chromedp.Run(tab, poll); err != nil {
		cards, _ := chromedp.Run(tab, chromedp.Evaluate[[]cardView](readCards))
		t.Fatalf("the page never showed a forecast and a plot on every card: %v\ncards: %+v", err, cards)
	}
	cards, err := chromedp.Run(tab, chromedp.Evaluate[[]cardView](readCards))
	if err != nil {
		t.Fatal(err)
	}
	after := apiChannels(t, base)
	if len(cards) != len(specimens) {
		t.Fatalf("page shows %d cards, want %d (%v)", len(cards), len(specimens), specimens)
	}
	for i, c := range cards {
		if c.Name != specimens[i] {
			t.Errorf("card %d is %q, want %q (configuration order)", i, c.Name, specimens[i])
		}
		checkCard(t, base, c, after[c.Name])
	}
	saveScreenshot(t, tab)
}

// checkCard compares one card with the API's view of the channel taken just after the
// card was read.
func checkCard(t *testing.T, base string, c cardView, after exporter.ChannelJSON) {
	t.Helper()
	shown, err := strconv.ParseFloat(c.Temp, 64)
	if err != nil || c.Unit != "°C" {
		t.Errorf("%s: temperature %q %q, want a number in °C", c.Name, c.Temp, c.Unit)
		return
	}
	// The demo cools in time-lapse, so compare with the readings themselves: the card
	// must show one of the channel's readings of the last two minutes of data time.
	if !amongRecentReadings(t, base, c.Name, shown) {
		t.Errorf("%s: card shows %.1f °C, which is none of the channel's recent readings", c.Name, shown)
	}
	// The chip names the fitted model (a refit may change it between the page and the
	// API, so only the family is compared) and the card shows no fault.
	if !strings.HasPrefix(c.Model, "lumped") || !strings.HasPrefix(after.Forecast.Model, "lumped") || c.Fault != "" {
		t.Errorf("%s: model chip %q (API %q), fault %q", c.Name, c.Model, after.Forecast.Model, c.Fault)
	}
	if len(c.Targets) != len(after.Targets) {
		t.Fatalf("%s: %d targets shown, API has %d", c.Name, len(c.Targets), len(after.Targets))
	}
	for i, tg := range c.Targets {
		api := after.Targets[i]
		if tg.Name != api.Name {
			t.Errorf("%s: target %d is %q, API %q", c.Name, i, tg.Name, api.Name)
		}
		if tg.Name == "handling" && tg.State == "predicted" && (tg.At == "" || !strings.Contains(tg.Text, "between")) {
			t.Errorf("%s: predicted handling target without time or bounds: %+v", c.Name, tg)
		}
	}
	if len(c.Targets) == 0 { // the ambient sensor: readings only
		if c.Readings < 10 || c.Ready {
			t.Errorf("%s: %d readings plotted, ready box %v", c.Name, c.Readings, c.Ready)
		}
		return
	}
	handling := c.Targets[0]
	if handling.State == "reached" {
		if !c.Ready || c.Cautions != len(exporter.HandlingCautions) || !strings.Contains(c.Headline, "estimate") {
			t.Errorf("%s: ready to handle but cautions shown %v (%d), headline %q", c.Name, c.Ready, c.Cautions, c.Headline)
		}
	} else if c.Ready {
		t.Errorf("%s: ready box shown while handling is %s", c.Name, handling.State)
	}
	if c.Readings < 10 || c.Curve < 10 || c.TargetLines != 2 || c.Inked < 500 {
		t.Errorf("%s: plot has %d readings, %d curve points, %d target lines, %d inked pixels",
			c.Name, c.Readings, c.Curve, c.TargetLines, c.Inked)
	}
}

// amongRecentReadings reports whether celsius, as shown to one decimal, is one of the
// channel's readings in the last two minutes of data time.
func amongRecentReadings(t *testing.T, base, channel string, celsius float64) bool {
	t.Helper()
	resp, err := http.Get(base + "/api/v1/channels/" + channel + "/series?from=-2m&max_points=10000")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	var s exporter.SeriesResponse
	if err := json.NewDecoder(resp.Body).Decode(&s); err != nil {
		t.Fatal(err)
	}
	for _, r := range s.Readings {
		if math.Abs(r[1]-celsius) < 0.051 {
			return true
		}
	}
	return false
}

func apiChannels(t *testing.T, base string) map[string]exporter.ChannelJSON {
	t.Helper()
	resp, err := http.Get(base + "/api/v1/channels")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	var body exporter.ChannelsResponse
	if err := json.NewDecoder(resp.Body).Decode(&body); err != nil {
		t.Fatal(err)
	}
	out := map[string]exporter.ChannelJSON{}
	for _, ch := range body.Channels {
		if ch.Role == "ambient" { // the room: read, never fitted
			if ch.Latest == nil || ch.Latest.Celsius == nil || ch.Forecast != nil || len(ch.Targets) > 0 {
				t.Fatalf("API ambient channel %s: want a reading and no forecast or targets", ch.Name)
			}
			continue
		}
		if ch.Latest == nil || ch.Latest.Celsius == nil || ch.Forecast == nil {
			t.Fatalf("API channel %s has no reading or forecast", ch.Name)
		}
		out[ch.Name] = ch
	}
	return out
}

// saveScreenshot writes page.png to $SETTLE_TEST_OUTPUT (else a temp dir) and, when
// /work/notes exists, a copy there for people to look at.
func saveScreenshot(t *testing.T, tab context.Context) {
	t.Helper()
	png, err := chromedp.Run(tab, chromedp.FullScreenshot(100))
	if err != nil {
		t.Fatal(err)
	}
	dir := os.Getenv("SETTLE_TEST_OUTPUT")
	if dir == "" {
		dir = t.TempDir()
	}
	paths := []string{filepath.Join(dir, "page.png")}
	if st, err := os.Stat("/work/notes"); err == nil && st.IsDir() {
		paths = append(paths, "/work/notes/page.png")
	}
	for _, p := range paths {
		if err := os.WriteFile(p, png, 0o644); err != nil {
			t.Errorf("screenshot: %v", err)
		}
	}
	t.Logf("screenshot (%d bytes): %s", len(png), strings.Join(paths, ", "))
}

// TestPageFahrenheit checks that display units F convert on the page while the API
// stays in °C.
func TestPageFahrenheit(t *testing.T) {
	tab := browser(t, 800, 1000) // a tablet-sized window
	base, _ := runDemoDaemon(t, func(c *config.Config) { c.Display.Units = "F" })
	if err := chromedp.Do(tab, chromedp.Navigate(base+"/")); err != nil {
		t.Fatal(err)
	}
	ready := chromedp.Poll[bool](`[...document.querySelectorAll('.temp')].some(e => e.dataset.celsius)`,
		chromedp.WithPollingInterval(100*time.Millisecond), chromedp.WithPollingTimeout(60*time.Second))
	if _, err := chromedp.Run(tab, ready); err != nil {
		t.Fatal(err)
	}
	cards, err := chromedp.Run(tab, chromedp.Evaluate[[]cardView](readCards))
	if err != nil {
		t.Fatal(err)
	}
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
}
