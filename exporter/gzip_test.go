package exporter

import (
	"bytes"
	"compress/gzip"
	"io"
	"net/http"
	"net/http/httptest"
	"slices"
	"strconv"
	"strings"
	"testing"
)

func TestAcceptsGzip(t *testing.T) {
	// The Accept-Encoding grammar and the meaning of q=0 ("not acceptable") are RFC 9110,
	// sections 12.4.2 and 12.5.3.
	cases := []struct {
		header string
		want   bool
	}{
		{"", false},
		{"gzip", true},
		{"GZIP", true},
		{"deflate, gzip;q=0.5", true},
		{"gzip;q=0", false},
		{"gzip; q=0.000", false},
		{"identity", false},
		{"*", true},
		{"*;q=0", false},
		{"br, zstd", false},
		{"gzipx", false},
		{"zstd;q=1.0,gzip;q=0.9,identity;q=0.5,*;q=0.1", true}, // what Prometheus 3 sends
	}
	for _, c := range cases {
		var values []string
		if c.header != "" {
			values = []string{c.header}
		}
		if got := acceptsGzip(values); got != c.want {
			t.Errorf("Accept-Encoding %q: gzip %v, want %v", c.header, got, c.want)
		}
	}
}

// seriesOf is each line of an exposition without its value (after the last space).
func seriesOf(text []byte) []string {
	var out []string
	for _, line := range strings.Split(string(text), "\n") {
		if i := strings.LastIndexByte(line, ' '); i > 0 && !strings.HasPrefix(line, "#") {
			line = line[:i]
		}
		out = append(out, line)
	}
	return out
}

// TestMetricsGzip scrapes the same state plain and with gzip: the compressed body
// decodes to the same series, says so in its headers, and carries no length of the
// uncompressed text.
func TestMetricsGzip(t *testing.T) {
	sb := newScrapeBench()
	scrape := func(enc string) *http.Response {
		req := httptest.NewRequest("GET", "/metrics", nil)
		if enc != "" {
			req.Header.Set("Accept-Encoding", enc)
		}
		w := httptest.NewRecorder()
		sb.h.ServeHTTP(w, req)
		return w.Result()
	}
	plain := scrape("")
	if plain.Header.Get("Content-Encoding") != "" {
		t.Fatalf("plain scrape: Content-Encoding %q", plain.Header.Get("Content-Encoding"))
	}
	text, _ := io.ReadAll(plain.Body)
	zipped := scrape("gzip")
	if got := zipped.Header.Get("Content-Encoding"); got != "gzip" {
		t.Fatalf("gzip scrape: Content-Encoding %q", got)
	}
	if got := zipped.Header.Get("Vary"); got != "Accept-Encoding" {
		t.Errorf("Vary %q, want Accept-Encoding", got)
	}
	raw, _ := io.ReadAll(zipped.Body)
	if got := zipped.Header.Get("Content-Length"); got != "" && got != strconv.Itoa(len(raw)) {
		t.Errorf("gzip scrape: Content-Length %s for a body of %d bytes", got, len(raw))
	}
	zr, err := gzip.NewReader(bytes.NewReader(raw))
	if err != nil {
		t.Fatal(err)
	}
	unzipped, err := io.ReadAll(zr)
	if err != nil {
		t.Fatal(err)
	}
	// The scrape's own timings and the runtime's figures change between the two
	// scrapes; every series must be there, in the same order.
	if a, b := seriesOf(unzipped), seriesOf(text); !slices.Equal(a, b) {
		t.Fatalf("gzip body decodes to %d series, plain body has %d (or they differ)", len(a), len(b))
	}
	if len(raw)*10 > len(text) {
		t.Errorf("gzip body %d bytes for %d of text: less than 10:1 on 1,000 channels of repetitive series", len(raw), len(text))
	}
}
