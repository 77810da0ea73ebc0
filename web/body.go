package web

import (
	"errors"
	"fmt"
	"mime"
	"net/http"

	"github.com/go-chi/chi/v5"
)

// Request bodies are bounded on every route: a form without a file may be at most maxFormBytes, and only
// the routes isUploadRoute names take a multipart body, up to maxUploadBodyBytes (the file, its fields and
// the multipart framing). Anything larger is answered 413 without being kept anywhere.
const (
	maxFormBytes       = 1 << 20
	maxUploadBodyBytes = maxUploadBytes + 1<<20
)

// isUploadRoute tells the routes ("METHOD pattern", as chi names them) that take a file.
func isUploadRoute(route string) bool {
	switch route {
	case "POST /import":
		return true
	}
	return false
}

// bodyTooLarge is a request body over the route's limit (413).
type bodyTooLarge struct {
	limit  int64
	upload bool
}

func (e bodyTooLarge) Error() string { return fmt.Sprintf("request body over %d bytes", e.limit) }

func (e bodyTooLarge) message() string {
	if e.upload {
		return fmt.Sprintf("The file is larger than %s, so it was refused and nothing was kept. Split it into several files.", mib(maxUploadBytes))
	}
	return fmt.Sprintf("What was sent is larger than the %s this page takes, so it was refused and nothing was kept. Files are sent on the Import page (at most %s).", mib(e.limit), mib(maxUploadBytes))
}

// notAForm is a multipart body (a file) sent to a route that takes none (415).
type notAForm struct{}

func (notAForm) Error() string { return "multipart body on a route that takes no file" }

// limitBodies bounds every request body before any handler reads it. The route is looked up in mux (the
// router being built) to tell upload routes from the others. A body whose declared length is over the
// limit is refused unread; a multipart body on a route that takes no file is refused unread (otherwise
// reading one form field would spill its files to temporary files); an urlencoded form is parsed here,
// through the limit, so that an over-long one is answered 413 rather than silently read as empty by
// FormValue.
func (s *Server) limitBodies(mux *chi.Mux) func(http.Handler) http.Handler {
	return func(next http.Handler) http.Handler {
		return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
			refuse := func(err error) {
				// The rest of the body is not read: close the connection instead of draining it.
				w.Header().Set("Connection", "close")
				s.handle(func(http.ResponseWriter, *http.Request) error { return err })(w, r)
			}
			path := r.URL.RawPath // the path chi routes by
			if path == "" {
				path = r.URL.Path
			}
			upload := isUploadRoute(r.Method + " " + mux.Find(chi.NewRouteContext(), r.Method, path))
			limit := int64(maxFormBytes)
			if upload {
				limit = maxUploadBodyBytes
			}
			if r.ContentLength > limit {
				refuse(bodyTooLarge{limit, upload})
				return
			}
			if mt, _, _ := mime.ParseMediaType(r.Header.Get("Content-Type")); mt == "multipart/form-data" && !upload {
				refuse(notAForm{})
				return
			}
			if r.Body != nil && r.Body != http.NoBody {
				r.Body = http.MaxBytesReader(w, r.Body, limit)
			}
			if !upload {
				// Errors other than the size (a malformed query or form) are left to the handlers, which
				// name the parameter.
				var mbe *http.MaxBytesError
				if err := r.ParseForm(); errors.As(err, &mbe) {
					refuse(bodyTooLarge{limit, upload})
					return
				}
			}
			next.ServeHTTP(w, r)
		})
	}
}

// mib writes a byte count as whole MiB.
func mib(n int64) string { return fmt.Sprintf("%d MiB", n>>20) }
