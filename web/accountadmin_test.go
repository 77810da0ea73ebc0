package web

import (
	"context"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"testing"
)

// An admin opens an account from the administration page, makes it a curator, then disables it: the
// account's open session stops at its next page and it cannot sign in again; a new password brings it
// back. The only admin cannot disable themselves, and the form says why beside the field.
func TestAdminChangesRoleDisablesAndResetsAnAccount(t *testing.T) {
	srv, db := mustServer(t)
	admin, contributor := client(t), client(t)
	signIn(t, admin, srv, "demo-admin")
	signIn(t, contributor, srv, "demo-contributor")
	id := userID(t, db, "demo-contributor")
	_, page, _ := do(t, admin, http.MethodGet, srv.URL+"/admin", nil)
	if !strings.Contains(page, fmt.Sprintf(`href="/admin/users/%d"`, id)) {
		t.Fatal("the administration page does not link the account")
	}
	post := func(c *http.Client, id int64, role, status, password string) (int, string) {
		st, body, _ := do(t, c, http.MethodPost, fmt.Sprintf("%s/admin/users/%d", srv.URL, id),
			url.Values{"role": {role}, "status": {status}, "password": {password}})
		return st, body
	}
	if st, body := post(admin, id, "curator", "enabled", ""); st != http.StatusSeeOther {
		t.Fatalf("role change: status %d: %.300s", st, body)
	}
	if u, _ := db.UserByID(context.Background(), id); u.Role != "curator" {
		t.Errorf("role %q, want curator", u.Role)
	}
	if st, _ := post(admin, id, "curator", "disabled", ""); st != http.StatusSeeOther {
		t.Fatalf("disable: status %d", st)
	}
	if _, body, _ := do(t, contributor, http.MethodGet, srv.URL+"/account", nil); strings.Contains(body, "demo-contributor") {
		t.Error("a disabled account's session still works")
	}
	fresh := client(t)
	st, _, _ := do(t, fresh, http.MethodPost, srv.URL+"/login", url.Values{"name": {"demo-contributor"}, "password": {"coeval-demo-only"}})
	if st == http.StatusSeeOther {
		t.Error("a disabled account signed in")
	}
	if st, _ := post(admin, id, "contributor", "enabled", "a new long password"); st != http.StatusSeeOther {
		t.Fatalf("re-enable with a new password: status %d", st)
	}
	again := client(t)
	if st, _, h := do(t, again, http.MethodPost, srv.URL+"/login", url.Values{"name": {"demo-contributor"}, "password": {"a new long password"}}); st != http.StatusSeeOther || strings.HasPrefix(h.Get("Location"), "/login") {
		t.Errorf("sign-in with the new password: status %d", st)
	}
	// The only admin cannot disable themselves; the message sits on the page.
	st, body := post(admin, userID(t, db, "demo-admin"), "admin", "disabled", "")
	if st != http.StatusUnprocessableEntity || !strings.Contains(body, "only enabled admin") {
		t.Errorf("disabling the only admin: status %d", st)
	}
	if st, _ := post(admin, id, "boss", "enabled", ""); st != http.StatusUnprocessableEntity {
		t.Errorf("an unknown role: status %d, want 422", st)
	}
}

// An admin makes another calibration the compilation's target from the calibrations page; others see no
// such button, and an unknown code is refused by name.
func TestAdminSetsTheTargetCalibrationOnItsPage(t *testing.T) {
	srv, db := mustServer(t)
	admin, curator := client(t), client(t)
	signIn(t, admin, srv, "demo-admin")
	signIn(t, curator, srv, "demo-curator")
	if _, body, _ := do(t, curator, http.MethodGet, srv.URL+"/calibrations", nil); strings.Contains(body, `action="/calibrations/target"`) {
		t.Error("a curator is offered to change the target")
	}
	_, body, _ := do(t, admin, http.MethodGet, srv.URL+"/calibrations", nil)
	if !strings.Contains(body, `value="renne11-fcs28294"`) {
		t.Fatal("the admin is not offered Renne et al. 2011 as the target")
	}
	if st, _, _ := do(t, admin, http.MethodPost, srv.URL+"/calibrations/target", url.Values{"code": {"renne11-fcs28294"}}); st != http.StatusSeeOther {
		t.Fatalf("status %d", st)
	}
	if c, err := db.TargetCalibration(context.Background()); err != nil || c.Code != "renne11-fcs28294" {
		t.Errorf("target %q (%v), want renne11-fcs28294", c.Code, err)
	}
	if st, body, _ := do(t, admin, http.MethodPost, srv.URL+"/calibrations/target", url.Values{"code": {"nope"}}); st != http.StatusBadRequest || !strings.Contains(body, "nope") {
		t.Errorf("an unknown code: status %d", st)
	}
}
