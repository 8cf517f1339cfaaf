// Package httpjson is how every settle HTTP endpoint answers: indented JSON, uncached,
// errors as {"error": "..."}, and the Allow list of a 405. The daemon's handler
// (exporter) and the runs API (runs) both answer through it, so their answers cannot
// drift apart.
package httpjson

import (
	"encoding/json"
	"net/http"
	"strings"
)

// Write answers with v as indented JSON and status, uncached.
func Write(w http.ResponseWriter, status int, v any) {
	w.Header().Set("Content-Type", "application/json; charset=utf-8")
	w.Header().Set("Cache-Control", "no-store")
	w.WriteHeader(status)
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	_ = enc.Encode(v) // the client may have gone; nothing useful to do with the error
}

// Error is the body of every error answer.
type Error struct {
	Error string `json:"error"`
}

// WriteError answers with status and msg as an Error.
func WriteError(w http.ResponseWriter, status int, msg string) {
	Write(w, status, Error{Error: msg})
}

// AllowedMethods lists the methods some route of mux takes on r's path, as an Allow
// header says them ("" when none does).
func AllowedMethods(mux *http.ServeMux, r *http.Request) string {
	var out []string
	for _, m := range []string{http.MethodGet, http.MethodPost} {
		probe := r.Clone(r.Context())
		probe.Method = m
		if _, pattern := mux.Handler(probe); pattern != "" {
			out = append(out, m)
			if m == http.MethodGet {
				out = append(out, http.MethodHead)
			}
		}
	}
	return strings.Join(out, ", ")
}
