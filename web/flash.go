package web

import (
	"context"
	"net/http"
)

// A confirmation shown once on the page a form's redirect leads to ("Saved."): the form's handler sets
// a short-lived cookie holding one of the codes below (never free text), the next page shows its
// sentence and clears it.

const flashCookie = "coeval_done"

// flashTexts are the confirmations by code.
var flashTexts = map[string]string{
	"created":         "Added to the compilation.",
	"created-pending": "Added. It is pending: a curator's review makes it count in the computations that take accepted records only.",
	"saved":           "Saved.",
	"saved-pending":   "Saved. The change is pending: a curator's review makes it count in the computations that take accepted records only.",
}

type flashKey struct{}

// setFlash asks the next page to confirm with the sentence of code.
func setFlash(w http.ResponseWriter, code string) {
	if _, ok := flashTexts[code]; !ok {
		return
	}
	http.SetCookie(w, &http.Cookie{Name: flashCookie, Value: code, Path: "/", MaxAge: 60, HttpOnly: true, SameSite: http.SameSiteLaxMode})
}

// takeFlash moves a confirmation from its cookie into the request's context, and clears the cookie.
func takeFlash(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		c, err := r.Cookie(flashCookie)
		if err == nil && r.Method == http.MethodGet && r.URL.Query().Get("format") == "" {
			http.SetCookie(w, &http.Cookie{Name: flashCookie, Value: "", Path: "/", MaxAge: -1, HttpOnly: true, SameSite: http.SameSiteLaxMode})
			if text, ok := flashTexts[c.Value]; ok {
				r = r.WithContext(context.WithValue(r.Context(), flashKey{}, text))
			}
		}
		next.ServeHTTP(w, r)
	})
}

func flashOf(ctx context.Context) string {
	s, _ := ctx.Value(flashKey{}).(string)
	return s
}
