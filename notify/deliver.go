package notify

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math/rand/v2"
	"net/http"
	"strings"
	"sync"
	"time"
)

// Run delivers queued events until ctx ends, one worker per webhook so that a slow
// receiver delays only its own events. Events still queued when ctx ends are dropped.
func (n *Notifier) Run(ctx context.Context) {
	var wg sync.WaitGroup
	for _, h := range n.hooks {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				select {
				case <-ctx.Done():
					return
				case ev := <-h.queue:
					n.deliver(ctx, h, ev)
				}
			}
		}()
	}
	wg.Wait()
}

// deliver posts ev to h, retrying with exponential backoff.
func (n *Notifier) deliver(ctx context.Context, h *hook, ev Event) {
	body, err := json.Marshal(ev)
	if err != nil {
		n.opt.Log.Error("notification not encodable", "webhook", h.cfg.Name, "event", ev.ID, "err", err)
		return
	}
	wait := n.opt.Backoff
	for attempt := 1; ; attempt++ {
		err := n.post(ctx, h.cfg.URL, ev.ID, body)
		if err == nil {
			n.sent.WithLabelValues(h.cfg.Name).Inc()
			return
		}
		if ctx.Err() != nil {
			return
		}
		n.failed.WithLabelValues(h.cfg.Name).Inc()
		var perm permanentError
		final := attempt >= n.opt.Attempts || errors.As(err, &perm)
		n.opt.Log.Warn("notification delivery failed", "webhook", h.cfg.Name, "event", ev.ID,
			"attempt", attempt, "final", final, "err", err)
		if final {
			n.dropped.WithLabelValues(h.cfg.Name).Inc()
			return
		}
		select {
		case <-ctx.Done():
			return
		case <-time.After(jitter(wait)):
		}
		wait = min(2*wait, n.opt.MaxBackoff)
	}
}

// permanentError is an answer that a retry will not change (a 4xx other than 408 and
// 429).
type permanentError struct{ msg string }

func (e permanentError) Error() string { return e.msg }

// post sends one attempt.
func (n *Notifier) post(ctx context.Context, url, id string, body []byte) error {
	req, err := http.NewRequestWithContext(ctx, http.MethodPost, url, bytes.NewReader(body))
	if err != nil {
		return permanentError{fmt.Sprintf("webhook url %s: %v", redact(url), err)}
	}
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set("User-Agent", "settle-notify/1")
	req.Header.Set("X-Settle-Event-Id", id)
	resp, err := n.opt.Client.Do(req)
	if err != nil {
		return fmt.Errorf("post %s: %w", redact(url), err)
	}
	_, _ = io.Copy(io.Discard, io.LimitReader(resp.Body, 4<<10))
	resp.Body.Close()
	switch s := resp.StatusCode; {
	case s >= 200 && s < 300:
		return nil
	case s == http.StatusRequestTimeout || s == http.StatusTooManyRequests || s >= 500:
		return fmt.Errorf("post %s: receiver answered %d %s", redact(url), s, http.StatusText(s))
	default:
		return permanentError{fmt.Sprintf("post %s: receiver answered %d %s (not retried)", redact(url), s, http.StatusText(s))}
	}
}

// redact drops the query of a URL for logs: webhook URLs often carry a secret there.
func redact(url string) string {
	if i := strings.IndexByte(url, '?'); i >= 0 {
		return url[:i] + "?…"
	}
	return url
}

// jitter spreads d by ±20 % so that many daemons do not retry in step.
func jitter(d time.Duration) time.Duration {
	return time.Duration(float64(d) * (0.8 + 0.4*rand.Float64()))
}
