package store

import (
	"context"
	"crypto/sha256"
	"database/sql"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"strings"
)

// Release is a citable version of the compilation: the accepted records of one moment, frozen in a
// snapshot file that pages, figures and downloads can be served from unchanged.
type Release struct {
	ID        int64         `json:"id"`
	Version   string        `json:"version"`
	Title     string        `json:"title"`
	Notes     string        `json:"notes"`
	DOI       string        `json:"doi"`
	CreatedAt string        `json:"created_at_utc"`
	CreatedBy string        `json:"created_by"`
	DataStamp int64         `json:"data_stamp"`
	File      string        `json:"-"`
	SHA256    string        `json:"snapshot_sha256"`
	Counts    Counts        `json:"counts"`
	LeftOut   []LeftOutItem `json:"left_out"`
}

// LeftOutItem names a record a release left out because it was not accepted.
type LeftOutItem struct {
	Kind   string `json:"kind"`
	ID     int64  `json:"id"`
	Name   string `json:"name"`
	Review string `json:"review_state"`
}

// ReleaseForm is what a curator gives when cutting a release.
type ReleaseForm struct {
	Version string
	Title   string
	Notes   string
}

// SettingRelease is set in a release's snapshot to its version: pages served from it say so.
const SettingRelease = "release_version"

var versionRE = regexp.MustCompile(`^[0-9A-Za-z][0-9A-Za-z._-]{0,39}$`)

// CheckReleaseForm returns the problems of a release form, by field.
func CheckReleaseForm(f ReleaseForm) map[string]string {
	p := map[string]string{}
	if !versionRE.MatchString(f.Version) {
		p["version"] = "a version label of 1 to 40 letters, digits, dots, dashes or underscores, starting with a letter or digit (e.g. 2027.1)"
	}
	if strings.TrimSpace(f.Title) == "" {
		p["title"] = "a title is needed (it is part of the citation)"
	} else if len(f.Title) > 300 {
		p["title"] = "at most 300 characters"
	}
	if len(f.Notes) > 20000 {
		p["notes"] = "at most 20,000 characters"
	}
	for field, v := range map[string]string{"version": f.Version, "title": f.Title} {
		if hasControl(v) {
			p[field] = "control characters are not allowed"
		}
	}
	return p
}

func hasControl(s string) bool {
	for _, r := range s {
		if r < 0x20 || r == 0x7f {
			return true
		}
	}
	return false
}

// FormError is a form's problems by field.
type FormError map[string]string

func (e FormError) Error() string {
	var parts []string
	for k, v := range e {
		parts = append(parts, k+": "+v)
	}
	return "the form has problems: " + strings.Join(parts, "; ")
}

// ReleasesDir is the folder that holds the release snapshots: beside the database file.
func (d *DB) ReleasesDir(ctx context.Context) (string, error) {
	var file string
	if err := d.reader().QueryRowContext(ctx, `SELECT file FROM pragma_database_list WHERE name = 'main'`).Scan(&file); err != nil {
		return "", fmt.Errorf("releases folder: %w", err)
	}
	if file == "" {
		return "", errors.New("releases folder: the database has no file")
	}
	return file + "-releases", nil
}

// ReleasePath is the snapshot file of a release.
func (d *DB) ReleasePath(ctx context.Context, r Release) (string, error) {
	dir, err := d.ReleasesDir(ctx)
	if err != nil {
		return "", err
	}
	return filepath.Join(dir, r.File), nil
}

// releaseKinds lists the kinds of record a release freezes, with the review column where the
// kind has one, in the order a changelog lists them.
var releaseKinds = []struct {
	Kind, Table, Name string
	Reviewed          bool
}{
	{"province", "provinces", "name", false},
	{"unit", "units", "name", false},
	{"section", "sections", "name", false},
	{"date", "dates", "sample_code || ' (' || method || ')'", true},
	{"tie point", "tie_points", "label", true},
	{"hiatus", "hiatuses", "'at ' || height_m || ' m'", true},
	{"event", "events", "name", true},
	{"measurement", "measurements", "sample || ' · ' || proxy_code", false},
}

// CutRelease freezes the accepted records of this moment as a release: a snapshot (VACUUM INTO) beside
// the database, from which sessions, uploads, tokens and password hashes are removed, and every pending
// or rejected date, tie point, hiatus and event is left out (and named in the release). The release row is
// written last, in the live database; on any failure nothing is left behind.
func (d *DB) CutRelease(ctx context.Context, f ReleaseForm, userID int64) (Release, error) {
	if p := CheckReleaseForm(f); len(p) > 0 {
		return Release{}, FormError(p)
	}
	var exists int
	if err := d.reader().QueryRowContext(ctx, `SELECT count(*) FROM releases WHERE version = ?`, f.Version).Scan(&exists); err != nil {
		return Release{}, err
	}
	if exists > 0 {
		return Release{}, FormError{"version": fmt.Sprintf("release %s exists already; a release is never changed, choose a new version", f.Version)}
	}
	dir, err := d.ReleasesDir(ctx)
	if err != nil {
		return Release{}, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return Release{}, fmt.Errorf("releases folder %s: %w", dir, err)
	}
	file := f.Version + ".db"
	path := filepath.Join(dir, file)
	tmp := path + ".partial"
	os.Remove(tmp)
	// The stamp and the snapshot come from one read: VACUUM INTO copies one consistent state, and the stamp
	// is read back from the copy.
	if _, err := d.db.ExecContext(ctx, `VACUUM INTO ?`, tmp); err != nil {
		os.Remove(tmp)
		return Release{}, fmt.Errorf("release %s: snapshot: %w", f.Version, err)
	}
	rel := Release{Version: f.Version, Title: strings.TrimSpace(f.Title), Notes: f.Notes, File: file, CreatedAt: d.stamp()}
	if err := freezeSnapshot(ctx, tmp, &rel); err != nil {
		os.Remove(tmp)
		return Release{}, fmt.Errorf("release %s: %w", f.Version, err)
	}
	sum, err := fileSHA256(tmp)
	if err != nil {
		os.Remove(tmp)
		return Release{}, err
	}
	rel.SHA256 = sum
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return Release{}, fmt.Errorf("release %s: %w", f.Version, err)
	}
	counts, _ := json.Marshal(rel.Counts)
	left, _ := json.Marshal(rel.LeftOut)
	var uid any
	if userID > 0 {
		uid = userID
	}
	res, err := d.db.ExecContext(ctx, `INSERT INTO releases (version, title, notes, created_at, created_by, data_stamp, file,
		sha256, counts_json, left_json) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
		rel.Version, rel.Title, rel.Notes, rel.CreatedAt, uid, rel.DataStamp, rel.File, rel.SHA256, string(counts), string(left))
	if err != nil {
		os.Remove(path)
		return Release{}, fmt.Errorf("release %s: %w", f.Version, err)
	}
	rel.ID, _ = res.LastInsertId()
	return d.ReleaseByVersion(ctx, rel.Version)
}

// freezeSnapshot turns a fresh copy of the database into a release: it names and removes what is not
// accepted, removes what is private, records the release's version, and fills rel's stamp and counts.
func freezeSnapshot(ctx context.Context, path string, rel *Release) error {
	// secure_delete overwrites what is deleted (sessions, password hashes, records left out) with zeros, so
	// no second VACUUM is needed to keep their bytes out of the file.
	sn, err := sql.Open("sqlite", "file:"+escapePath(path)+"?_pragma=busy_timeout(5000)&_pragma=foreign_keys(1)&_pragma=secure_delete(1)")
	if err != nil {
		return err
	}
	defer sn.Close()
	sn.SetMaxOpenConns(1)
	tx, err := sn.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	defer tx.Rollback()
	for _, k := range releaseKinds {
		if !k.Reviewed {
			continue
		}
		rows, err := tx.QueryContext(ctx, `SELECT id, `+k.Name+`, review_state FROM `+k.Table+` WHERE review_state <> 'accepted' ORDER BY id`)
		if err != nil {
			return fmt.Errorf("left out %s: %w", k.Table, err)
		}
		for rows.Next() {
			var it LeftOutItem
			if err := rows.Scan(&it.ID, &it.Name, &it.Review); err != nil {
				rows.Close()
				return err
			}
			it.Kind = k.Kind
			rel.LeftOut = append(rel.LeftOut, it)
		}
		rows.Close()
		if err := rows.Err(); err != nil {
			return err
		}
	}
	// Dates last: tie points and events that point at a left-out date lose the link (ON DELETE SET NULL).
	for _, q := range []string{
		`DELETE FROM tie_points WHERE review_state <> 'accepted'`,
		`DELETE FROM hiatuses WHERE review_state <> 'accepted'`,
		`DELETE FROM events WHERE review_state <> 'accepted'`,
		`DELETE FROM dates WHERE review_state <> 'accepted'`,
		`DELETE FROM sessions`, `DELETE FROM uploads`, `DELETE FROM api_tokens`,
		`UPDATE users SET password_hash = ''`,
		`DELETE FROM releases`,
	} {
		if _, err := tx.ExecContext(ctx, q); err != nil {
			return fmt.Errorf("freeze (%s): %w", q, err)
		}
	}
	if _, err := tx.ExecContext(ctx, `INSERT INTO settings (key, value) VALUES (?, ?) ON CONFLICT(key) DO UPDATE SET value = excluded.value`,
		SettingRelease, rel.Version); err != nil {
		return err
	}
	if err := tx.QueryRowContext(ctx, `SELECT COALESCE(MAX(id), 0) FROM change_batches`).Scan(&rel.DataStamp); err != nil {
		return err
	}
	if err := tx.Commit(); err != nil {
		return err
	}
	snap := &DB{db: sn}
	rel.Counts, err = snap.Counts(ctx)
	return err
}

func fileSHA256(path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", err
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}

const releaseSelect = `SELECT r.id, r.version, r.title, r.notes, r.doi, r.created_at, COALESCE(u.name, ''), r.data_stamp,
	r.file, r.sha256, r.counts_json, r.left_json FROM releases r LEFT JOIN users u ON u.id = r.created_by`

func scanRelease(sc interface{ Scan(...any) error }) (Release, error) {
	var r Release
	var counts, left string
	if err := sc.Scan(&r.ID, &r.Version, &r.Title, &r.Notes, &r.DOI, &r.CreatedAt, &r.CreatedBy, &r.DataStamp,
		&r.File, &r.SHA256, &counts, &left); err != nil {
		return r, err
	}
	if err := json.Unmarshal([]byte(counts), &r.Counts); err != nil {
		return r, fmt.Errorf("release %s counts: %w", r.Version, err)
	}
	if err := json.Unmarshal([]byte(left), &r.LeftOut); err != nil {
		return r, fmt.Errorf("release %s left out: %w", r.Version, err)
	}
	return r, nil
}

// Releases lists the releases, newest first.
func (d *DB) Releases(ctx context.Context) ([]Release, error) {
	rows, err := d.reader().QueryContext(ctx, releaseSelect+` ORDER BY r.id DESC`)
	if err != nil {
		return nil, fmt.Errorf("releases: %w", err)
	}
	defer rows.Close()
	var out []Release
	for rows.Next() {
		r, err := scanRelease(rows)
		if err != nil {
			return nil, err
		}
		out = append(out, r)
	}
	return out, rows.Err()
}

// ReleaseByVersion returns one release, or ErrNotFound.
func (d *DB) ReleaseByVersion(ctx context.Context, version string) (Release, error) {
	r, err := scanRelease(d.reader().QueryRowContext(ctx, releaseSelect+` WHERE r.version = ?`, version))
	if errors.Is(err, sql.ErrNoRows) {
		return r, fmt.Errorf("release %q: %w", version, ErrNotFound)
	}
	return r, err
}

// SetReleaseDOI records the DOI a curator got after depositing the release's bundle. It is the one field
// of a release that changes; the snapshot never does.
func (d *DB) SetReleaseDOI(ctx context.Context, version, doi string) error {
	doi = strings.TrimSpace(doi)
	if doi != "" && !doiRE.MatchString(doi) {
		return FormError{"doi": "a DOI written 10.xxxx/…"}
	}
	res, err := d.db.ExecContext(ctx, `UPDATE releases SET doi = ? WHERE version = ?`, doi, version)
	if err != nil {
		return err
	}
	if n, _ := res.RowsAffected(); n == 0 {
		return fmt.Errorf("release %q: %w", version, ErrNotFound)
	}
	return nil
}
