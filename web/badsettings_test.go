package web

import (
	"net/http"
	"regexp"
	"strings"
	"testing"
)

// A page asked for with a choice that needs a second setting (a set smoothing width without its width)
// and a reversed section window answers 400 with every setting kept in a form that shows the page again:
// the setting at fault marked with its message, the others (a calibration, the replicates) kept with
// their values, and the form sending to the same page. A download keeps the plain answer.
func TestRefusedSettingsAreKeptInAForm(t *testing.T) {
	srv, _ := mustServer(t)
	status, _, body := get(t, srv, "/provinces/1/timeline?bw=user&reps=300&cal=sj77-fcs2802")
	if status != http.StatusBadRequest {
		t.Fatalf("status %d, want 400", status)
	}
	if !strings.Contains(body, `<form class="edit settings" method="get" action="/provinces/1/timeline">`) {
		t.Fatal("the refused page has no form of its settings")
	}
	form := body[strings.Index(body, `class="edit settings"`):]
	form = form[:strings.Index(form, "</form>")]
	for name, value := range map[string]string{"reps": "300", "cal": "sj77-fcs2802", "bw": "user"} {
		if !regexp.MustCompile(`name="` + name + `" value="` + value + `"`).MatchString(form) {
			t.Errorf("the setting %s=%s is not kept in the form", name, value)
		}
	}
	h := regexp.MustCompile(`(?s)<label class="invalid">\s*<span class="label">h</span>\s*<input type="text" name="h" value="">.*?<span class="field-error">([^<]*)</span>`).FindStringSubmatch(form)
	if h == nil || !strings.Contains(h[1], "needs a bandwidth h in Ma") {
		t.Errorf("the missing width is not marked beside its field: %q", h)
	}
	if strings.Contains(form, `<label class="invalid"> <span class="label">reps`) {
		t.Error("a setting that is fine is marked")
	}
	status, _, body = get(t, srv, "/sections/1?baseline=window&bg_base=30&bg_top=10&draws=200")
	if status != http.StatusBadRequest || !regexp.MustCompile(`(?s)name="bg_base" value="30">.*?field-error">must lie below bg_top`).MatchString(body) {
		t.Errorf("a reversed background window: status %d, its field not marked", status)
	}
	status, _, body = get(t, srv, "/provinces/1/timeline?format=csv&bw=user")
	if status != http.StatusBadRequest || strings.Contains(body, "settings") {
		t.Errorf("a refused download: status %d, want a plain 400", status)
	}
}
