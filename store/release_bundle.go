package store

import (
	"archive/zip"
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/csv"
	"encoding/hex"
	"fmt"
	"io"
	"regexp"
	"strings"
	"time"
)

// bundleManifest is the manifest of a release bundle: the import order of its data files, each with its
// SHA-256.
const bundleManifest = "manifest.csv"

var manifestColumns = []string{"kind", "section", "file", "sha256"}

// bundleFile is one data file of a bundle.
type bundleFile struct {
	kind, section, name string
	body                []byte
}

var unsafeName = regexp.MustCompile(`[^0-9A-Za-z._-]+`)

// releaseFiles exports every record of a snapshot in its import format, in import order.
func releaseFiles(ctx context.Context, snap *DB) ([]bundleFile, error) {
	var files []bundleFile
	add := func(kind, section, name string) error {
		var b bytes.Buffer
		if err := snap.Export(ctx, kind, section, &b); err != nil {
			return fmt.Errorf("bundle %s: %w", name, err)
		}
		if section != "" && bytes.Count(b.Bytes(), []byte("\n")) <= 1 {
			return nil // a section without records of this kind: no file (an import refuses a header alone)
		}
		files = append(files, bundleFile{kind, section, name, b.Bytes()})
		return nil
	}
	for _, k := range []string{"provinces", "units", "sections", "dates"} {
		if err := add(k, "", k+".csv"); err != nil {
			return nil, err
		}
	}
	secs, err := snap.Sections(ctx)
	if err != nil {
		return nil, err
	}
	for i, s := range secs {
		slug := strings.Trim(unsafeName.ReplaceAllString(strings.ToLower(s.Name), "-"), "-")
		for _, k := range []string{"measurements", "ties", "events", "hiatuses"} {
			if err := add(k, s.Name, fmt.Sprintf("%s-%02d-%s.csv", k, i+1, slug)); err != nil {
				return nil, err
			}
		}
	}
	return files, nil
}

func sha256Hex(b []byte) string {
	h := sha256.Sum256(b)
	return hex.EncodeToString(h[:])
}

// WriteReleaseBundle writes the bundle of a release to deposit with a journal or a data repository: a zip
// of every table in its import format, a manifest (import order and the SHA-256 of each file), a column
// dictionary, a citation file (CITATION.cff, Citation File Format 1.2.0) and a short README.
func WriteReleaseBundle(ctx context.Context, snapshotPath string, rel Release, w io.Writer) error {
	snap, err := OpenSnapshot(ctx, snapshotPath)
	if err != nil {
		return err
	}
	defer snap.Close()
	files, err := releaseFiles(ctx, snap)
	if err != nil {
		return err
	}
	zw := zip.NewWriter(w)
	put := func(name string, body []byte) error {
		// A fixed time, so the same release always gives the same bytes.
		fw, err := zw.CreateHeader(&zip.FileHeader{Name: name, Method: zip.Deflate, Modified: releaseTime(rel)})
		if err != nil {
			return err
		}
		_, err = fw.Write(body)
		return err
	}
	var man bytes.Buffer
	mw := NewCSVWriter(&man)
	mw.Write(manifestColumns)
	for _, f := range files {
		mw.Write([]string{f.kind, f.section, f.name, sha256Hex(f.body)})
		if err := put(f.name, f.body); err != nil {
			return err
		}
	}
	mw.Flush()
	if err := put(bundleManifest, man.Bytes()); err != nil {
		return err
	}
	if err := put("columns.csv", columnDictionary()); err != nil {
		return err
	}
	if err := put("CITATION.cff", citationCFF(rel)); err != nil {
		return err
	}
	if err := put("README.txt", bundleReadme(rel)); err != nil {
		return err
	}
	return zw.Close()
}

// columnDictionary describes every column of every data file, from the importer's own definitions.
func columnDictionary() []byte {
	var b bytes.Buffer
	w := NewCSVWriter(&b)
	w.Write([]string{"file_kind", "column", "required", "meaning", "allowed_values"})
	for _, f := range FileFormats() {
		for _, c := range f.Columns {
			var vals []string
			for _, v := range c.Values {
				vals = append(vals, v.Code)
			}
			req := "no"
			if c.Required {
				req = "yes"
			}
			w.Write([]string{f.Kind, c.Name, req, c.Meaning, strings.Join(vals, " | ")})
		}
	}
	w.Flush()
	return b.Bytes()
}

func yamlQuote(s string) string {
	return `"` + strings.NewReplacer(`\`, `\\`, `"`, `\"`, "\n", " ", "\r", " ").Replace(s) + `"`
}

// citationCFF is the release's citation in the Citation File Format (1.2.0).
func citationCFF(rel Release) []byte {
	var b strings.Builder
	b.WriteString("cff-version: 1.2.0\n")
	b.WriteString("message: \"If you use this compilation, please cite this release.\"\n")
	b.WriteString("type: dataset\n")
	fmt.Fprintf(&b, "title: %s\n", yamlQuote(rel.Title))
	fmt.Fprintf(&b, "version: %s\n", yamlQuote(rel.Version))
	fmt.Fprintf(&b, "date-released: %s\n", releaseDate(rel))
	b.WriteString("authors:\n  - name: \"The curators of the compilation\"\n")
	if rel.DOI != "" {
		fmt.Fprintf(&b, "doi: %s\n", yamlQuote(rel.DOI))
	}
	if strings.TrimSpace(rel.Notes) != "" {
		fmt.Fprintf(&b, "abstract: %s\n", yamlQuote(rel.Notes))
	}
	return []byte(b.String())
}

func bundleReadme(rel Release) []byte {
	return []byte(fmt.Sprintf(`%s — release %s (%s)

Every table of the release in the compilation's import format (UTF-8 CSV, first row the header; the
columns are described in columns.csv). manifest.csv gives the order in which the files import into an
empty compilation and the SHA-256 of each; a changed file is refused by its checksum. CITATION.cff is the
release's citation.

Records: %d provinces, %d units, %d dates, %d sections, %d tie points, %d events.
Only accepted records are included; %d pending or rejected records were left out.
`, rel.Title, rel.Version, releaseDate(rel), rel.Counts.Provinces, rel.Counts.Units, rel.Counts.Dates, rel.Counts.Sections,
		rel.Counts.TiePoints, rel.Counts.Events, len(rel.LeftOut)))
}

// ImportBundle loads a release bundle into an empty compilation. Every data file is checked against the
// manifest's SHA-256 before anything is imported, so a changed file is refused by name and nothing is
// written; the files then import in the manifest's order through the ordinary importers.
func (d *DB) ImportBundle(ctx context.Context, name string, r io.ReaderAt, size int64) ([]ImportResult, error) {
	zr, err := zip.NewReader(r, size)
	if err != nil {
		return nil, fmt.Errorf("%s: not a release bundle (a zip file): %w", name, err)
	}
	read := func(file string) ([]byte, error) {
		f, err := zr.Open(file)
		if err != nil {
			return nil, fmt.Errorf("%s: %s is missing from the bundle", name, file)
		}
		defer f.Close()
		return io.ReadAll(io.LimitReader(f, 1<<30))
	}
	man, err := read(bundleManifest)
	if err != nil {
		return nil, err
	}
	rows, err := csv.NewReader(bytes.NewReader(man)).ReadAll()
	if err != nil || len(rows) == 0 || strings.Join(rows[0], ",") != strings.Join(manifestColumns, ",") {
		return nil, fmt.Errorf("%s: %s must have the columns %s", name, bundleManifest, strings.Join(manifestColumns, ", "))
	}
	type entry struct {
		kind, section, file string
		body                []byte
	}
	var entries []entry
	for i, row := range rows[1:] {
		if _, ok := FileFormatByKind(row[0]); !ok {
			return nil, fmt.Errorf("%s: %s line %d: unknown kind %q", name, bundleManifest, i+2, row[0])
		}
		body, err := read(row[2])
		if err != nil {
			return nil, err
		}
		if got := sha256Hex(body); got != row[3] {
			return nil, fmt.Errorf("%s: %s has changed since the release was made (its SHA-256 is %s, the manifest says %s); nothing was imported",
				name, row[2], got, row[3])
		}
		entries = append(entries, entry{row[0], row[1], row[2], body})
	}
	c, err := d.Counts(ctx)
	if err != nil {
		return nil, err
	}
	if c.Provinces+c.Units+c.Dates+c.Sections > 0 {
		return nil, fmt.Errorf("%s: a bundle loads into an empty compilation; this one holds records already", name)
	}
	var results []ImportResult
	for _, e := range entries {
		res, err := d.ImportReader(ctx, e.kind, e.section, e.file, bytes.NewReader(e.body))
		if err != nil {
			return results, fmt.Errorf("%s: %w", name, err)
		}
		results = append(results, res)
	}
	return results, nil
}

// releaseTime is when the release was cut (the zip entries carry it, so a bundle's bytes never change).
func releaseTime(rel Release) time.Time {
	t, err := time.Parse(TimeFormat, rel.CreatedAt)
	if err != nil {
		return time.Date(1980, 1, 1, 0, 0, 0, 0, time.UTC)
	}
	return t.UTC()
}

// releaseDate is the release's date, YYYY-MM-DD.
func releaseDate(rel Release) string { return releaseTime(rel).Format("2006-01-02") }

// Date is the day the release was cut, YYYY-MM-DD (UTC).
func (r Release) Date() string { return releaseDate(r) }
