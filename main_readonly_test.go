package main

import (
	"errors"
	"net/http"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

// readOnlyView makes dir's files appear on read-only storage and returns the folder to use: as root
// (who may write whatever the permissions say) a read-only bind mount of dir, skipping the test where
// mounting is not allowed; otherwise dir itself with its write permissions taken away.
func readOnlyView(t *testing.T, dir string) string {
	t.Helper()
	if os.Geteuid() != 0 {
		entries, _ := os.ReadDir(dir)
		for _, e := range entries {
			os.Chmod(filepath.Join(dir, e.Name()), 0o444)
		}
		os.Chmod(dir, 0o555)
		t.Cleanup(func() { os.Chmod(dir, 0o755) })
		return dir
	}
	mnt := t.TempDir()
	if err := syscall.Mount(dir, mnt, "", syscall.MS_BIND, ""); err != nil {
		t.Skipf("cannot bind-mount a folder read-only here (%v)", err)
	}
	t.Cleanup(func() { syscall.Unmount(mnt, 0) })
	if err := syscall.Mount("", mnt, "", syscall.MS_REMOUNT|syscall.MS_BIND|syscall.MS_RDONLY, ""); err != nil {
		t.Skipf("cannot remount a folder read-only here (%v)", err)
	}
	if err := os.WriteFile(filepath.Join(mnt, "probe"), nil, 0o644); err == nil || !errors.Is(err, syscall.EROFS) {
		t.Skipf("the read-only mount can be written (%v)", err)
	}
	return mnt
}

// After a clean shutdown the database's folder becomes read-only storage: the server still starts (it
// says so, migrates and seeds nothing), every page carries the reading-only banner, signing in works and
// signed-in reads answer 200, and a change gets the clear 503. Before, it stopped at start-up with
// "unable to open database file".
func TestServeStartsReadOnlyOnReadOnlyStorage(t *testing.T) {
	dir := t.TempDir()
	_, stop := startServe(t, filepath.Join(dir, "coeval.db"))
	if _, err := stop(); err != nil {
		t.Fatal(err)
	}
	ro := readOnlyView(t, dir)
	base, stop := startServe(t, filepath.Join(ro, "coeval.db"))
	c := newClient()
	for _, p := range []string{"/", "/dates", "/provinces/1"} {
		status, body, _ := fetch(t, c, base+p)
		if status != http.StatusOK || !strings.Contains(body, "open for reading only") {
			t.Errorf("GET %s on read-only storage: status %d, banner %v", p, status, strings.Contains(body, "open for reading only"))
		}
	}
	signIn(t, c, base, "demo-curator")
	for _, p := range []string{"/", "/dates", "/account"} {
		if status, body, _ := fetch(t, c, base+p); status != http.StatusOK || !strings.Contains(body, "demo-curator") {
			t.Errorf("signed-in GET %s on read-only storage: status %d, signed in %v", p, status, strings.Contains(body, "demo-curator"))
		}
	}
	res, err := c.PostForm(base+"/provinces/new", url.Values{"province": {"Read-only Province"}})
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if res.StatusCode != http.StatusServiceUnavailable {
		t.Errorf("a change on read-only storage: status %d, want 503", res.StatusCode)
	}
	out, err := stop()
	if err != nil {
		t.Fatalf("serve on read-only storage: %v", err)
	}
	if !strings.Contains(out, "serving it for reading only") || strings.Contains(out, "seeded") {
		t.Errorf("start-up on read-only storage printed %q: want it to say it serves for reading only, and no seeding", out)
	}
}
