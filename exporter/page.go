package exporter

import (
	"bytes"
	"html/template"
	"io/fs"
	"mime"
	"net/http"
	"path"
	"strings"

	"github.com/settle-lab/settle/exporter/web"
	"github.com/settle-lab/settle/internal/httpjson"
	"github.com/settle-lab/settle/predict"
)

var pageTemplate = template.Must(template.ParseFS(web.FS, "index.html"))

// pageData fills the page template.
type pageData struct {
	Units    string
	Cautions []string
}

// servePage renders the status page; the script fills it from the API.
func (h *Handler) servePage(w http.ResponseWriter, r *http.Request) {
	units := "C"
	if h.opt.Display.Fahrenheit {
		units = "F"
	}
	var buf bytes.Buffer
	if err := pageTemplate.Execute(&buf, pageData{Units: units, Cautions: predict.HandlingCautions}); err != nil {
		h.opt.Log.Error("status page template", "err", err)
		httpjson.WriteError(w, http.StatusInternalServerError, "status page could not be rendered")
		return
	}
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	w.Header().Set("Cache-Control", "no-store")
	w.Header().Set("Content-Security-Policy", "default-src 'self'; img-src 'self' data:; object-src 'none'; base-uri 'none'; frame-ancestors 'none'")
	_, _ = w.Write(buf.Bytes())
}

// staticHandler serves the embedded files under /static/: regular files only, so a
// directory gives 404 rather than a listing.
func staticHandler() http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		name := strings.TrimPrefix(path.Clean(r.URL.Path), "/")
		if !strings.HasPrefix(name, "static/") || !fs.ValidPath(name) {
			httpjson.WriteError(w, http.StatusNotFound, "no such file")
			return
		}
		data, err := fs.ReadFile(web.FS, name)
		if err != nil {
			httpjson.WriteError(w, http.StatusNotFound, "no such file")
			return
		}
		ct := mime.TypeByExtension(path.Ext(name))
		if ct == "" {
			ct = "application/octet-stream"
		}
		w.Header().Set("Content-Type", ct)
		w.Header().Set("Cache-Control", "no-cache")
		_, _ = w.Write(data)
	})
}
