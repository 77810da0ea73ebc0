package web

import (
	"bytes"
	"context"
	"io"
	"mime/multipart"
	"net/http"
	"net/http/httptest"
	"net/url"
	"regexp"
	"strings"
	"testing"
)

// paperTable is shaped like a paper's supplementary table (invented values): a title, a header over two
// rows, plateau and isochron ages in ka with 2σ as a percentage, the header repeated, a note.
const paperTable = `Table S3. Ar/Ar ages (invented values),,,,,
Sample,Unit,Plateau age,,Isochron age,
,,Age (ka),± 2σ (%),Age (ka),± 2σ (%)
MP-01,Haldruna Flow,155460,0.5,155500,0.8
MP-02,Haldruna Flow,155120,0.25,155100,0.4
Sample,Unit,Plateau age,,Isochron age,
,,Age (ka),± 2σ (%),Age (ka),± 2σ (%)
MP-03,Haldruna Flow,154980,1.0,155010,1.2
a Plateau ages are preferred.,,,,,
`

func uploadForMapping(t testing.TB, c *http.Client, srv *httptest.Server, kind, name string, body []byte) (int, string, http.Header) {
	t.Helper()
	var buf bytes.Buffer
	mw := multipart.NewWriter(&buf)
	mw.WriteField("kind", kind)
	mw.WriteField("columns", "map")
	fw, _ := mw.CreateFormFile("file", name)
	fw.Write(body)
	mw.Close()
	req, _ := http.NewRequest(http.MethodPost, srv.URL+"/import", &buf)
	req.Header.Set("Content-Type", mw.FormDataContentType())
	res, err := c.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	return res.StatusCode, string(b), res.Header
}

// paperMappingForm is the mapping page's form for paperTable, as a curator fills it in.
func paperMappingForm(name string) url.Values {
	return url.Values{
		"shown": {"|2|2|"}, "saved": {""}, "header_row": {"2"}, "header_rows": {"2"},
		"age_unit": {"ka"}, "sigma_form": {"percent"}, "skip_headers": {"yes"}, "skip_notes": {"yes"},
		"col_sample_code": {"Sample"}, "col_unit": {"Unit"}, "col_age_ma": {"Plateau age Age (ka)"}, "col_sigma_ma": {"Plateau age ± 2σ (%)"},
		"const_province": {"Hvarn Plateau Basalts (invented)"}, "const_method": {"arar_plateau"}, "const_interpretation": {"eruption"},
		"const_sigma_level": {"2"}, "name": {name},
	}
}

// Upload → map (suggestions, a required field left unset, text in an age) → preview with the original
// cells → commit → the change says how the numbers got in → the mapping is offered for the next file.
func TestMappingStepUploadPreviewCommit(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	c := client(t)
	signIn(t, c, srv, "demo-curator")
	before, _ := db.Counts(ctx)

	status, _, h := uploadForMapping(t, c, srv, "dates", "tableS3.csv", []byte(paperTable))
	mapURL := h.Get("Location")
	if status != http.StatusSeeOther || !regexp.MustCompile(`^/import/\d+/map$`).MatchString(mapURL) {
		t.Fatalf("upload for mapping: %d to %q, want 303 to the mapping step", status, mapURL)
	}
	status, page, _ := do(t, c, http.MethodGet, srv.URL+mapURL, nil)
	for _, want := range []string{"Suggested from the file", "Plateau age Age (ka)", "155460 · 155120 · 154980", "choose the one to keep"} {
		if status != 200 || !strings.Contains(page, want) {
			t.Errorf("the mapping page (%d) does not say %q", status, want)
		}
	}
	// The header is found on rows 2–3 and the suggestion picks ka and percent: the select shows them.
	for _, want := range []string{`<option value="ka" selected>`, `<option value="percent" selected>`} {
		if !strings.Contains(page, want) {
			t.Errorf("the mapping page does not preselect %s", want)
		}
	}

	// A required field left unset: the mapping page again, the field named, nothing written.
	f := paperMappingForm("")
	f.Del("const_method")
	status, page, _ = do(t, c, http.MethodPost, srv.URL+mapURL, f)
	if status != http.StatusUnprocessableEntity || !strings.Contains(page, "method: required, but not set") {
		t.Errorf("a mapping without the method: %d; want 422 naming the method", status)
	}

	// The mapping, saved by name: the preview shows each converted value with the file's cell.
	status, page, _ = do(t, c, http.MethodPost, srv.URL+mapURL, paperMappingForm("Invented Ar lab"))
	commit := regexp.MustCompile(`/import/\d+/commit`).FindString(page)
	for _, want := range []string{"155.46 (155460)", "0.7773 (0.5)", "skipped: repeats the header", "skipped: a note", "3 rows become dates; 3 rows are skipped",
		"age_ma", "the file&#39;s column “Plateau age ± 2σ (%)”, a percentage of the age", "÷ 1000 to Ma"} {
		if !strings.Contains(page, want) && !strings.Contains(page, strings.ReplaceAll(want, "&#39;", "'")) {
			t.Errorf("the preview (%d) does not show %q", status, want)
		}
	}
	if status != 200 || commit == "" {
		t.Fatalf("the preview: %d, commit %q", status, commit)
	}
	if after, _ := db.Counts(ctx); after != before {
		t.Fatal("the preview changed the compilation")
	}
	status, _, h = do(t, c, http.MethodPost, srv.URL+commit, url.Values{})
	if status != http.StatusSeeOther {
		t.Fatalf("commit: %d", status)
	}
	if after, _ := db.Counts(ctx); after.Dates != before.Dates+3 {
		t.Fatalf("after commit %d dates, want %d", after.Dates, before.Dates+3)
	}
	_, page, _ = do(t, c, http.MethodGet, srv.URL+h.Get("Location"), nil)
	if !strings.Contains(page, "How the file") || !strings.Contains(page, "Invented Ar lab") || !strings.Contains(page, "Plateau age Age (ka)") {
		t.Error("the change's page does not say how the file's columns were read")
	}

	// A second file of the same layout: the saved mapping is offered; an age holding text is named.
	second := strings.NewReplacer("MP-0", "MQ-0", "155120", "n.d.").Replace(paperTable)
	_, _, h = uploadForMapping(t, c, srv, "dates", "tableS4.csv", []byte(second))
	mapURL = h.Get("Location")
	_, page, _ = do(t, c, http.MethodGet, srv.URL+mapURL, nil)
	if !strings.Contains(page, "The saved mapping “Invented Ar lab” was made for a file with these same columns") {
		t.Errorf("the saved mapping is not offered for a file with the same columns")
	}
	f = paperMappingForm("Invented Ar lab")
	f.Set("shown", "|2|2|Invented Ar lab")
	f.Set("saved", "Invented Ar lab")
	status, page, _ = do(t, c, http.MethodPost, srv.URL+mapURL, f)
	if status != http.StatusUnprocessableEntity || !strings.Contains(page, "age_ma (the file’s “Plateau age Age (ka)”): &#34;n.d.&#34; is not a number: want the age in ka") &&
		!strings.Contains(page, `age_ma (the file&#39;s “Plateau age Age (ka)”): &#34;n.d.&#34; is not a number: want the age in ka`) {
		t.Errorf("an age holding text: %d; want 422 naming row and column", status)
	}
	if strings.Contains(page, "/commit") {
		t.Error("a file with problems can be committed")
	}
	if after, _ := db.Counts(ctx); after.Dates != before.Dates+3 {
		t.Error("the file with problems changed the compilation")
	}
	// A contributor may not replace a mapping another account saved; under a new name it is theirs.
	contrib := client(t)
	signIn(t, contrib, srv, "demo-contributor")
	_, _, h = uploadForMapping(t, contrib, srv, "dates", "tableS5.csv", []byte(strings.ReplaceAll(paperTable, "MP-0", "MR-0")))
	status, page, _ = do(t, contrib, http.MethodPost, srv.URL+h.Get("Location"), paperMappingForm("Invented Ar lab"))
	if status != http.StatusUnprocessableEntity || !strings.Contains(page, "only a curator may replace it") {
		t.Errorf("a contributor replacing a curator's mapping: %d", status)
	}
	if status, _, _ = do(t, contrib, http.MethodPost, srv.URL+h.Get("Location"), paperMappingForm("My copy")); status != http.StatusOK {
		t.Errorf("a contributor saving a mapping of their own: %d", status)
	}
	// Only dates can be mapped; a file in our format cannot be mapped.
	if status, page, _ := uploadForMapping(t, c, srv, "units", "u.csv", []byte(paperTable)); status != http.StatusUnprocessableEntity || !strings.Contains(page, "Only dates") {
		t.Errorf("mapping units: %d", status)
	}
}
