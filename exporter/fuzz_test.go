package exporter

import (
	"bufio"
	"encoding/json"
	"github.com/settle-lab/settle/internal/httpjson"
	"net/http/httptest"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// FuzzHandler sends arbitrary methods, paths and queries (bytes from outside) through
// the handler: every answer must be a well-formed status, and every error JSON.
func FuzzHandler(f *testing.F) {
	seeds, err := os.Open(filepath.Join("..", "testdata", "exporter", "fuzz-requests.txt"))
	if err != nil {
		f.Fatal(err)
	}
	sc := bufio.NewScanner(seeds)
	for sc.Scan() {
		if method, target, ok := strings.Cut(sc.Text(), " "); ok && !strings.HasPrefix(method, "#") {
			f.Add(methodIndex(method), target, "")
		}
	}
	seeds.Close()
	h := newTestHandler(curveState(), Options{Token: "t"})
	f.Fuzz(func(t *testing.T, m uint8, target, body string) {
		method := methods[int(m)%len(methods)]
		if !strings.HasPrefix(target, "/") || strings.ContainsAny(target, " \r\n\t#") {
			t.Skip("not a request line httptest can build")
		}
		for _, c := range target {
			if c < 0x21 || c > 0x7e {
				t.Skip("not a request line httptest can build")
			}
		}
		if _, err := url.ParseRequestURI(target); err != nil {
			t.Skip("the server answers 400 before any handler runs")
		}
		req := httptest.NewRequest(method, target, strings.NewReader(body))
		req.Header.Set("Authorization", "Bearer t")
		w := httptest.NewRecorder()
		h.ServeHTTP(w, req)
		if w.Code < 200 || w.Code > 599 {
			t.Fatalf("%s %s: status %d", method, target, w.Code)
		}
		if w.Code >= 400 && strings.HasPrefix(w.Header().Get("Content-Type"), "application/json") {
			var e httpjson.Error
			if err := json.Unmarshal(w.Body.Bytes(), &e); err != nil || e.Error == "" {
				t.Fatalf("%s %s: error body %q", method, target, w.Body)
			}
		}
	})
}

var methods = []string{"GET", "HEAD", "POST", "PUT", "DELETE", "PATCH", "OPTIONS"}

func methodIndex(m string) uint8 {
	for i, v := range methods {
		if v == m {
			return uint8(i)
		}
	}
	return 0
}

// FuzzParseSeriesQuery checks that no query value makes the parser panic and that an
// accepted query is consistent.
func FuzzParseSeriesQuery(f *testing.F) {
	for _, s := range [][3]string{{"-15m", "", "50"}, {"2026-03-04T10:00:00Z", "1772620800", ""},
		{"1e300", "-1e300", "2"}, {"NaN", "Inf", "-1"}, {"-9999999h", "", "10000"}} {
		f.Add(s[0], s[1], s[2])
	}
	newest := time.Date(2026, 3, 4, 11, 0, 0, 0, time.UTC)
	f.Fuzz(func(t *testing.T, from, to, maxPoints string) {
		vals := map[string]string{"from": from, "to": to, "max_points": maxPoints}
		q, err := ParseSeriesQuery(func(k string) string { return vals[k] }, newest)
		if err != nil {
			return
		}
		if q.MaxPoints < 2 || q.MaxPoints > MaxMaxPoints {
			t.Fatalf("accepted max_points %d", q.MaxPoints)
		}
		if !q.From.IsZero() && !q.To.IsZero() && q.To.Before(q.From) {
			t.Fatalf("accepted to %v before from %v", q.To, q.From)
		}
		_, _ = Series(curveState(), "steel", q)
	})
}
