package httpjson

import (
	"net/http"
	"net/http/httptest"
	"testing"
)

// TestAllowedMethods: the Allow list of a 405 names what the mux routes on the path,
// HEAD along with GET as net/http serves it (RFC 9110 §9.3.2: HEAD is GET without
// the body).
func TestAllowedMethods(t *testing.T) {
	mux := http.NewServeMux()
	noop := func(http.ResponseWriter, *http.Request) {}
	mux.HandleFunc("GET /a", noop)
	mux.HandleFunc("POST /b", noop)
	mux.HandleFunc("GET /c", noop)
	mux.HandleFunc("POST /c", noop)
	for _, tc := range []struct{ path, want string }{
		{"/a", "GET, HEAD"},
		{"/b", "POST"},
		{"/c", "GET, HEAD, POST"},
		{"/d", ""},
	} {
		r := httptest.NewRequest(http.MethodDelete, tc.path, nil)
		if got := AllowedMethods(mux, r); got != tc.want {
			t.Errorf("AllowedMethods(%s) = %q, want %q", tc.path, got, tc.want)
		}
	}
}

// TestWriteError: every error answer is the status with {"error": msg}, uncached JSON.
func TestWriteError(t *testing.T) {
	w := httptest.NewRecorder()
	WriteError(w, http.StatusConflict, `run "r1" is active`)
	if w.Code != http.StatusConflict || w.Header().Get("Content-Type") != "application/json; charset=utf-8" ||
		w.Header().Get("Cache-Control") != "no-store" || w.Body.String() != "{\n  \"error\": \"run \\\"r1\\\" is active\"\n}\n" {
		t.Errorf("got %d %v %q", w.Code, w.Header(), w.Body.String())
	}
}
