package web

import (
	"encoding/json"
	"io"
	"net/http"

	"coeval/views"
)

// Uncertainty convention stated in every JSON document.
const jsonSigmaNote = "uncertainties in fields ending _1s are 1σ; sigma_level_published is the level the source reported"

func writeJSON(w http.ResponseWriter, status int, v any) {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		http.Error(w, "could not encode JSON", http.StatusInternalServerError)
		return
	}
	w.Header().Set("Content-Type", "application/json; charset=utf-8")
	w.WriteHeader(status)
	w.Write(append(b, '\n'))
}

// listJSON is the envelope of every JSON list.
type listJSON struct {
	Kind          string `json:"kind"`
	Total         int    `json:"total"`
	Offset        int    `json:"offset"`
	Count         int    `json:"count"`
	Uncertainties string `json:"uncertainties"`
	Items         any    `json:"items"`
}

func writeList(w http.ResponseWriter, kind string, total, offset, count int, items any) error {
	writeJSON(w, http.StatusOK, listJSON{Kind: kind, Total: total, Offset: offset, Count: count, Uncertainties: jsonSigmaNote, Items: items})
	return nil
}

func toLinks(ls []linkSpec) []views.Link {
	out := make([]views.Link, len(ls))
	for i, l := range ls {
		out[i] = views.Link{Label: l.label, URL: l.url}
	}
	return out
}

// respondList answers a whole-list request (format read from the URL): CSV through writeCSV, JSON as a
// list envelope, or the HTML page that view builds (with its CSV and JSON links).
func respondList[T any](s *Server, w http.ResponseWriter, r *http.Request, kind string, items []T,
	writeCSV func(io.Writer, []T) error, view func() views.List) error {
	p := newParams(r)
	format := p.format()
	if err := p.err(); err != nil {
		return err
	}
	switch format {
	case "csv":
		return writeDownload(w, kind+".csv", func(w io.Writer) error { return writeCSV(w, items) })
	case "json":
		return writeList(w, kind, len(items), 0, len(items), items)
	}
	l := view()
	l.Page.Downloads = toLinks(downloads(r))
	s.render(w, r, http.StatusOK, views.ListPage(l))
	return nil
}
