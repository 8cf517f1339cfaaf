package deploy

import (
	"os"
	"strings"
	"testing"
)

// The promtool checks run in deploy/prometheus so that rule_files paths resolve as they
// do when the files are installed side by side in /etc/prometheus.
const promDir = "prometheus"

func TestPromtoolCheckRules(t *testing.T) {
	promtool := requireTool(t, "promtool", "prometheus")
	out := run(t, promDir, promtool, "check", "rules", "settle-alerts.yml")
	// Seven alerts: ReadyToHandle, TargetSoon, ThermocoupleOpen, ReadingsStale,
	// FitOutsideValidity, PortDown, DaemonDown.
	if !strings.Contains(out, "SUCCESS: 8 rules found") {
		t.Errorf("promtool check rules: want 8 rules, got:\n%s", out)
	}
}

func TestPromtoolTestRules(t *testing.T) {
	promtool := requireTool(t, "promtool", "prometheus")
	out := run(t, promDir, promtool, "test", "rules", "settle-alerts_test.yml")
	if !strings.Contains(out, "SUCCESS") {
		t.Errorf("promtool test rules: no SUCCESS in output:\n%s", out)
	}
}

func TestPromtoolCheckConfig(t *testing.T) {
	promtool := requireTool(t, "promtool", "prometheus")
	out := run(t, promDir, promtool, "check", "config", "prometheus.yml")
	if !strings.Contains(out, "SUCCESS: 1 rule files found") {
		t.Errorf("promtool check config: want the alert rule file loaded, got:\n%s", out)
	}
}

// TestEveryAlertIsTested checks that each alert in settle-alerts.yml has unit tests in
// settle-alerts_test.yml that expect it both silent and firing.
func TestEveryAlertIsTested(t *testing.T) {
	rules := readFile(t, promDir+"/settle-alerts.yml")
	tests := readFile(t, promDir+"/settle-alerts_test.yml")
	alerts := fieldValues(rules, "- alert:")
	if len(alerts) != 8 {
		t.Fatalf("settle-alerts.yml: found %d alerts %v, want 8", len(alerts), alerts)
	}
	for _, alert := range alerts {
		silent, firing := alertTestKinds(tests, alert)
		if !silent || !firing {
			t.Errorf("settle-alerts_test.yml: alert %s: has a silent case %v, a firing case %v; want both",
				alert, silent, firing)
		}
	}
}

// TestHandlingAlertsCarryCautions checks that every alert mentioning handling carries
// the safety cautions (DESIGN.md, Safety).
func TestHandlingAlertsCarryCautions(t *testing.T) {
	rules := readFile(t, promDir+"/settle-alerts.yml")
	cautions := []string{"estimate", "contact thermometer", "protective gloves",
		"core lags the surface", "lab's rules and local regulations"}
	for _, alert := range []string{"SettleSpecimenReadyToHandle", "SettleTargetSoon"} {
		// Fold the YAML block's line breaks as `>-` does.
		body := strings.Join(strings.Fields(ruleBody(rules, alert)), " ")
		if body == "" {
			t.Fatalf("settle-alerts.yml: alert %s not found", alert)
		}
		for _, c := range cautions {
			if !strings.Contains(body, c) {
				t.Errorf("settle-alerts.yml: alert %s lacks the caution %q", alert, c)
			}
		}
	}
}

// fieldValues returns the trimmed rest of every line whose trimmed text starts with key.
func fieldValues(text, key string) []string {
	var vals []string
	for line := range strings.Lines(text) {
		line = strings.TrimSpace(line)
		if rest, ok := strings.CutPrefix(line, key); ok {
			vals = append(vals, strings.TrimSpace(rest))
		}
	}
	return vals
}

// ruleBody returns the text of one alerting rule: from its "- alert:" line to the next
// rule or group.
func ruleBody(rules, alert string) string {
	_, after, ok := strings.Cut(rules, "- alert: "+alert+"\n")
	if !ok {
		return ""
	}
	if i := strings.Index(after, "- alert:"); i >= 0 {
		after = after[:i]
	}
	return after
}

// alertTestKinds reports whether the promtool test file has a case for alert that
// expects no alerts (silent) and one that expects some (firing).
func alertTestKinds(tests, alert string) (silent, firing bool) {
	for _, chunk := range strings.Split(tests, "alertname: ")[1:] {
		name, rest, _ := strings.Cut(chunk, "\n")
		if strings.TrimSpace(name) != alert {
			continue
		}
		exp := strings.TrimSpace(rest)
		switch {
		case strings.HasPrefix(exp, "exp_alerts: []"):
			silent = true
		case strings.HasPrefix(exp, "exp_alerts:"):
			firing = true
		}
	}
	return silent, firing
}

func readFile(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("read %s: %v", path, err)
	}
	return string(b)
}
