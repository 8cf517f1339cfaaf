package config

import (
	"fmt"
	"github.com/settle-lab/settle/notify"
	"net/url"
	"slices"
	"time"
)

// Interval is the commit interval, DefaultCommitInterval when unset (zero).
func (j Journal) Interval() time.Duration {
	if j.CommitInterval <= 0 {
		return DefaultCommitInterval
	}
	return j.CommitInterval
}

// Fahrenheit reports whether the status page shows °F.
func (d Display) Fahrenheit() bool { return d.Units == "F" }

// checkServices validates the journal, http, notify and display sections.
func (c *Config) checkServices(k *checker) {
	if c.Journal.CommitInterval < 0 {
		k.add("journal.commit_interval", "must not be negative (0 or absent: %s), got %s", DefaultCommitInterval, c.Journal.CommitInterval)
	}
	if c.Journal.Retention < 0 {
		k.add("journal.retention", "must not be negative (0 keeps everything), got %s", c.Journal.Retention)
	}
	if (c.HTTP.TLSCert == "") != (c.HTTP.TLSKey == "") {
		k.add("http", "tls_cert and tls_key go together: give both or neither")
	}
	if u := c.Display.Units; u != "" && u != "C" && u != "F" {
		k.add("display.units", "want C or F, got %q", u)
	}
	for i, ch := range c.Channels {
		if ch.Run != nil && ch.Run.Specimen == "" {
			k.add(fmt.Sprintf("channels[%d].run.specimen", i), "must not be empty: name the specimen, e.g. a sample number")
		}
	}
	names := map[string]int{}
	for i, w := range c.Notify.Webhooks {
		checkWebhook(k, fmt.Sprintf("notify.webhooks[%d]", i), w, i, names)
	}
}

func checkWebhook(k *checker, key string, w notify.Webhook, i int, names map[string]int) {
	k.uniqueName(key, "webhook", w.Name, i, names, "notify.webhooks")
	if u, err := url.Parse(w.URL); err != nil || (u.Scheme != "http" && u.Scheme != "https") || u.Host == "" {
		k.add(key+".url", "want an http:// or https:// URL, got %q", w.URL)
	}
	if w.LeadTime < 0 {
		k.add(key+".lead_time", "must not be negative, got %s", w.LeadTime)
	}
	for j, e := range w.Events {
		if !slices.Contains(notify.EventKinds, e) {
			k.add(fmt.Sprintf("%s.events[%d]", key, j), "unknown event %q; known: reached, soon, fault", e)
		}
	}
}
