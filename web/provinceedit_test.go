package web

import (
	"context"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"testing"
)

func TestProvinceForms(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	contrib, curator := signedIn(t, srv)
	id := checkEditFlow(t, srv, contrib, curator, editFlow{
		newPath: "/provinces/new", path: "/provinces", recRev: "province", db: db,
		form:     url.Values{"province": {"Test Traps"}, "description": {"as typed"}},
		badField: "province", badValue: "", badMsg: "is empty; a value is required",
		text: []string{"province", "description"}, notes: "description",
		state: func(id int64) (string, bool) {
			p, err := db.Province(ctx, id)
			return p.Description, err == nil
		},
	})
	// Contributors add provinces and units to them, but do not edit existing provinces.
	if s, _, _ := do(t, contrib, http.MethodGet, fmt.Sprintf("%s/provinces/%d/edit", srv.URL, id), nil); s != http.StatusForbidden {
		t.Errorf("contributor opening a province's edit form: %d, want 403", s)
	}
	_, page, _ := do(t, contrib, http.MethodGet, fmt.Sprintf("%s/provinces/%d", srv.URL, id), nil)
	if !strings.Contains(page, fmt.Sprintf("/units/new?province=%d", id)) {
		t.Error("the province page does not offer to add a unit")
	}
	if _, list, _ := do(t, contrib, http.MethodGet, srv.URL+"/provinces", nil); !strings.Contains(list, `href="/provinces/new"`) {
		t.Error("the province list does not offer a new province to contributors")
	}
	// The demo province has units: its delete is refused and says so.
	ps, _ := db.Provinces(ctx)
	for _, p := range ps {
		if p.NUnits == 0 {
			continue
		}
		s, body, _ := do(t, curator, http.MethodPost, fmt.Sprintf("%s/provinces/%d/delete", srv.URL, p.ID), url.Values{"version": {fmt.Sprint(p.Version)}})
		if s != http.StatusConflict || !strings.Contains(body, fmt.Sprintf("used by %d units", p.NUnits)) {
			t.Errorf("deleting %s: status %d, want 409 naming its %d units", p.Name, s, p.NUnits)
		}
		// Undoing its creation is refused the same way, from the history page's restore.
		revs, _ := db.Revisions(ctx, "province", p.ID)
		s, body, _ = do(t, curator, http.MethodPost, fmt.Sprintf("%s/revisions/%d/revert", srv.URL, revs[len(revs)-1].ID), url.Values{})
		if s != http.StatusConflict || !strings.Contains(body, "was not restored") {
			t.Errorf("undoing the creation of %s: status %d, want 409", p.Name, s)
		}
	}
}

// A palaeomagnetic pole typed into the province form is stored as typed (a longitude of 0..360 as
// −180..180), shown on the province page with its source, offered again in the edit form, and a pole
// without its source is refused beside the field.
func TestProvinceFormCarriesAPole(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	_, curator := signedIn(t, srv)
	form := url.Values{"province": {"Pole Traps"}, "pole_latitude": {"-71.25"}, "pole_longitude": {"300"}, "pole_a95": {"4.5"}}
	status, body, _ := do(t, curator, http.MethodPost, srv.URL+"/provinces/new", form)
	if status != http.StatusUnprocessableEntity || !fieldError(body, "pole_source", "is empty; a pole needs its latitude, longitude, A95 and source together") {
		t.Fatalf("a pole without a source: status %d, want 422 beside pole_source", status)
	}
	form.Set("pole_source", "invented pole for a test")
	status, _, h := do(t, curator, http.MethodPost, srv.URL+"/provinces/new", form)
	if status != http.StatusSeeOther {
		t.Fatalf("create: status %d", status)
	}
	var id int64
	if _, err := fmt.Sscanf(h.Get("Location"), "/provinces/%d", &id); err != nil {
		t.Fatal(err)
	}
	p, err := db.Province(ctx, id)
	if err != nil || !p.HasPole() || *p.PoleLatitude != -71.25 || *p.PoleLongitude != -60 || *p.PoleA95 != 4.5 {
		t.Fatalf("stored %+v, %v; want the pole as typed, 300° E stored as −60", p, err)
	}
	_, page, _ := do(t, curator, http.MethodGet, fmt.Sprintf("%s/provinces/%d", srv.URL, id), nil)
	for _, w := range []string{"Palaeomagnetic pole", "71.2° S, 60.0° W, A95 4.5° (95 % confidence)", "invented pole for a test"} {
		if !strings.Contains(page, w) {
			t.Errorf("province page lacks %q", w)
		}
	}
	_, edit, _ := do(t, curator, http.MethodGet, fmt.Sprintf("%s/provinces/%d/edit", srv.URL, id), nil)
	for _, w := range []string{`name="pole_latitude" value="-71.25"`, `name="pole_longitude" value="-60"`, `name="pole_a95" value="4.5"`, `value="invented pole for a test"`} {
		if !strings.Contains(edit, w) {
			t.Errorf("edit form lacks %s", w)
		}
	}
	// A province without a pole says so.
	ps, _ := db.Provinces(ctx)
	for _, q := range ps {
		if q.HasPole() {
			continue
		}
		_, page, _ := do(t, curator, http.MethodGet, fmt.Sprintf("%s/provinces/%d", srv.URL, q.ID), nil)
		if !strings.Contains(page, "none recorded") {
			t.Errorf("%s: the page does not say it has no pole", q.Name)
		}
	}
}
