package exporter

import (
	"strings"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus/testutil"
)

// The reload series follow Prometheus' own (prometheus_config_last_reload_successful
// and …_success_timestamp_seconds): the first load counts as a success; a refused
// reload sets 0 and keeps the last success's time; the next success sets both.
func TestConfigReloads(t *testing.T) {
	c := NewConfigReloads(t0)
	head := `
# HELP settle_config_last_reload_successful 1 when the last configuration reload (SIGHUP) succeeded or none was tried, 0 when it was refused and the previous configuration runs on.
# TYPE settle_config_last_reload_successful gauge
settle_config_last_reload_successful %s
# HELP settle_config_last_reload_success_timestamp_seconds Unix time of the last successful configuration load, the daemon's first included.
# TYPE settle_config_last_reload_success_timestamp_seconds gauge
settle_config_last_reload_success_timestamp_seconds %s
`
	// 2026-03-04T10:00:00Z is Unix 1772618400 and 10:05:00Z 1772618700
	// (date -d 2026-03-04T10:00:00Z +%s).
	steps := []struct {
		name     string
		change   func()
		ok, when string
	}{
		{"first load", func() {}, "1", "1.7726184e+09"},
		{"refused reload", c.Failed, "0", "1.7726184e+09"},
		{"successful reload", func() { c.Succeeded(t0.Add(5 * time.Minute)) }, "1", "1.7726187e+09"},
	}
	for _, st := range steps {
		st.change()
		want := strings.Replace(strings.Replace(head, "%s", st.ok, 1), "%s", st.when, 1)
		if err := testutil.CollectAndCompare(c, strings.NewReader(want)); err != nil {
			t.Errorf("%s: %v", st.name, err)
		}
	}
	if problems, err := testutil.CollectAndLint(c); err != nil || len(problems) > 0 {
		t.Errorf("lint: %v %v", problems, err)
	}
}
