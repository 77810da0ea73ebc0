package store

import (
	"context"
	"strings"
	"testing"
)

// wantProblem fails unless err is a validation error with a problem on column col containing msg.
func wantProblem(t *testing.T, err error, col, msg string) {
	t.Helper()
	ve, ok := AsValidation(err)
	if !ok {
		t.Fatalf("got %v, want a validation error on %s", err, col)
	}
	for _, p := range ve.Problems {
		if p.Column == col && strings.Contains(p.Message, msg) {
			return
		}
	}
	t.Errorf("problems %v: want one on column %q containing %q", ve.Problems, col, msg)
}

// A σ too small to weigh (1e-320 gives 1/σ² = +Inf and a NaN mean on every page) or implausibly fine
// (below 10⁻⁶ of the age) is refused by imports and forms alike, with the rule in the message.
func TestImplausibleSigmaRefused(t *testing.T) {
	const rule = "at least 10⁻⁶ × the age"
	for _, c := range []struct{ name, row string }{
		{"subnormal", "P,U1,S-2,upb_idtims,zircon,eruption,155.4,1e-320,2,,,\n"},
		{"1e-200 pending", "P,U1,S-2,upb_idtims,zircon,eruption,155.4,1e-200,2,,,\n"},
		{"below 1 ppm at 2σ", "P,U1,S-2,upb_idtims,zircon,eruption,155.4,0.0003,2,,,\n"}, // 1σ 0.00015 < 0.0001554
	} {
		t.Run(c.name, func(t *testing.T) {
			db := mustOpenDB(t)
			_, err := importString(t, db, "dates", "", dateHeader+goodDate+c.row)
			wantProblem(t, err, "sigma_ma", rule)
		})
	}
	db, d := seededDate(t)
	ctx := context.Background()
	// 1 ppm exactly is accepted (the floor is inclusive): 155.4 Ma × 10⁻⁶ × 2 = 0.0003108 at 2σ.
	f := FormOfDate(d)
	f["sigma_ma"] = "0.0003108"
	if _, err := db.UpdateDate(ctx, d.ID, d.Version, f, true); err != nil {
		t.Fatalf("σ of exactly 10⁻⁶ × the age refused: %v", err)
	}
	f = FormOfDate(d)
	f["sample_code"], f["sigma_ma"] = "S-9", "1e-320"
	_, err := db.CreateDate(WithActor(ctx, 0), f, false)
	wantProblem(t, err, "sigma_ma", rule)

	if _, err := importString(t, db, "sections", "", "section\nS\n"); err != nil {
		t.Fatal(err)
	}
	ties := "label,height_m,kind,distribution,age_ma,sigma_ma,sigma_level\nash,12.5,radiometric,normal,155.2,1e-200,2\n"
	_, err = importString(t, db, "ties", "S", ties)
	wantProblem(t, err, "sigma_ma", rule)
	_, err = db.CreateTie(ctx, 1, Form{"label": "ash", "height_m": "1", "kind": "radiometric", "distribution": "normal",
		"age_ma": "155.2", "sigma_ma": "1e-320", "sigma_level": "1"}, true)
	wantProblem(t, err, "sigma_ma", rule)
}

// Numbers are read in decimal notation only, in files and forms alike: strconv.ParseFloat would also take
// hexadecimal floats, digit separators, Inf and NaN (Go syntax, not a number a scientist types).
func TestNumbersDecimalOnly(t *testing.T) {
	for _, c := range []struct {
		in   string
		want float64
		ok   bool
	}{
		{"155.4", 155.4, true}, {"-1.5", -1.5, true}, {"+2", 2, true}, {".5", 0.5, true}, {"5.", 5, true},
		{"1.2e-3", 0.0012, true}, {"1E+2", 100, true}, {"0", 0, true}, {"007", 7, true},
		{"0x1p10", 0, false}, {"0X1P10", 0, false}, {"1_000", 0, false}, {"Inf", 0, false}, {"+Inf", 0, false},
		{"infinity", 0, false}, {"NaN", 0, false}, {"nan", 0, false}, {"1e400", 0, false}, {"", 0, false},
		{".", 0, false}, {"-", 0, false}, {"e5", 0, false}, {"1e", 0, false}, {"1e+", 0, false}, {"1.2.3", 0, false},
		{"1,5", 0, false}, {" 1", 0, false}, {"1 ", 0, false}, {"١٢", 0, false}, {"1d", 0, false},
	} {
		got, ok := ParseDecimal(c.in)
		if ok != c.ok || got != c.want {
			t.Errorf("ParseDecimal(%q) = %v, %v; want %v, %v", c.in, got, ok, c.want, c.ok)
		}
	}
	for _, bad := range []string{"0x1p10", "1_000", "Inf", "NaN"} {
		t.Run(bad, func(t *testing.T) {
			db := mustOpenDB(t)
			_, err := importString(t, db, "dates", "", dateHeader+"P,U1,S-1,upb_idtims,zircon,eruption,"+bad+",0.06,2,,,\n")
			wantProblem(t, err, "age_ma", `want a number, got "`+bad+`"`)
			_, err = importString(t, db, "units", "", "province,unit,volume_km3\nP,U,"+bad+"\n")
			wantProblem(t, err, "volume_km3", `want a number, got "`+bad+`"`)
		})
	}
	db, d := seededDate(t)
	f := FormOfDate(d)
	f["age_ma"] = "0x1p10"
	_, err := db.UpdateDate(context.Background(), d.ID, d.Version, f, true)
	wantProblem(t, err, "age_ma", `want a number, got "0x1p10"`)
}

// Control characters (U+0000–U+001F) are refused in every text field of files and forms, naming the
// field: they made the figures' SVG malformed XML. Notes and descriptions may hold tabs and line breaks.
func TestControlCharactersRefused(t *testing.T) {
	const ctl = "control character"
	cases := []struct{ name, kind, body, col, msg string }{
		{"NUL in sample code", "dates", dateHeader + "P,U1,S\x00-1,upb_idtims,zircon,eruption,155.4,0.06,2,,,\n", "sample_code", ctl + " U+0000 at character 2"},
		{"escape in unit name", "units", "province,unit\nP,U\x1b[31m\n", "unit", ctl + " U+001B"},
		{"tab in province name", "provinces", "province,description\n\"P\tQ\",d\n", "province", "not even tabs"},
		{"line break in a province name", "units", "province,unit\n\"P\nQ\",U\n", "province", ctl + " U+000A"},
		{"bell in notes", "units", "province,unit,notes\nP,U,ring\x07\n", "notes", ctl + " U+0007"},
		{"not UTF-8", "provinces", "province\nM\xfcnster\n", "province", "not UTF-8"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			db := mustOpenDB(t)
			_, err := importString(t, db, c.kind, "", c.body)
			wantProblem(t, err, c.col, c.msg)
		})
	}
	db := mustOpenDB(t)
	if _, err := importString(t, db, "units", "", "province,unit,notes\nP,U,\"a\tb\r\nc\"\n"); err != nil {
		t.Fatalf("tab and line break in notes refused: %v", err)
	}
	if _, err := importString(t, db, "provinces", "", "province,description\nQ,\"two\tcolumns\nand lines\"\n"); err != nil {
		t.Fatalf("tab and line break in a description refused: %v", err)
	}
	// Forms are checked by the same parser and name the field.
	db, d := seededDate(t)
	ctx := context.Background()
	f := FormOfDate(d)
	f["material"] = "zir\x00con"
	_, err := db.UpdateDate(ctx, d.ID, d.Version, f, true)
	wantProblem(t, err, "material", ctl+" U+0000")
	f = FormOfDate(d)
	f["notes"] = "line one\r\nline\ttwo"
	if _, err := db.UpdateDate(ctx, d.ID, d.Version, f, true); err != nil {
		t.Errorf("notes with a tab and a line break refused in a form: %v", err)
	}
	if _, err := importString(t, db, "sections", "", "section\nS\n"); err != nil {
		t.Fatal(err)
	}
	_, err = db.CreateTie(ctx, 1, Form{"label": "ash\x0b1", "height_m": "1", "kind": "radiometric", "distribution": "normal",
		"age_ma": "155.2", "sigma_ma": "0.1", "sigma_level": "1"}, true)
	wantProblem(t, err, "label", ctl+" U+000B")
}

// CSVSafe quotes what a spreadsheet would run as a formula, and reading undoes exactly that: a cell
// written and read back is unchanged, whatever it holds.
func TestCSVSafeRule(t *testing.T) {
	for _, c := range []struct{ in, out string }{
		{"=1+1", "'=1+1"}, {"+cmd|' /C calc'!A0", "'+cmd|' /C calc'!A0"}, {"@SUM(A1)", "'@SUM(A1)"},
		{"-2+3", "'-2+3"}, {"-", "'-"}, {"\t=x", "'\t=x"}, {"\r=x", "'\r=x"}, // formulas: OWASP CSV Injection (common practice)
		{"-1.5", "-1.5"}, {"+2", "+2"}, {"-1.2e-3", "-1.2e-3"}, // numbers stay as they are
		{"'=x", "''=x"}, {"''@x", "'''@x"}, // quoted already: one more quote, so reading gives it back
		{"'t Hooft", "'t Hooft"}, {"'-1.5", "'-1.5"}, {"'", "'"}, {"''", "''"}, {"", ""}, {"Hvarn", "Hvarn"}, {"a=b", "a=b"},
	} {
		if got := CSVSafe(c.in); got != c.out {
			t.Errorf("CSVSafe(%q) = %q, want %q", c.in, got, c.out)
		}
		if got := csvUnquote(CSVSafe(c.in)); got != c.in {
			t.Errorf("read back of %q: %q", c.in, got)
		}
		if CSVSafe(c.in) == c.in && csvUnquote(c.in) != c.in {
			t.Errorf("%q is written as it is but read as %q", c.in, csvUnquote(c.in))
		}
	}
}

// A downloaded file holding names and notes that begin like formulas has them quoted, and is imported
// again as it is: the same records come back.
func TestFormulaLikeCellsRoundTrip(t *testing.T) {
	ctx := context.Background()
	db := mustOpenDB(t)
	units := "province,unit,notes\n" +
		"\"=HYPERLINK(\"\"http://example.invalid\"\")\",@unit,+1+2\n" +
		"P,-U,''=already quoted\n" + // stored as '=already quoted
		"P,U2,-1.5\n"
	if _, err := importString(t, db, "units", "", units); err != nil {
		t.Fatal(err)
	}
	dates := dateHeader + "P,U2,=S-1,upb_idtims,zircon,eruption,155.4,0.06,2,,,\n"
	if _, err := importString(t, db, "dates", "", dates); err != nil {
		t.Fatal(err)
	}
	var ub, db1 strings.Builder
	us, err := db.Units(ctx, 0)
	if err != nil {
		t.Fatal(err)
	}
	ds, _, err := db.Dates(ctx, DateFilter{})
	if err != nil {
		t.Fatal(err)
	}
	if err := WriteUnitsCSV(&ub, us); err != nil {
		t.Fatal(err)
	}
	if err := WriteDatesCSV(&db1, ds); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{`"'=HYPERLINK(""http://example.invalid"")"`, "'@unit", "'+1+2", "'-U", "''=already quoted", ",-1.5\n"} {
		if !strings.Contains(ub.String(), want) {
			t.Errorf("units download lacks %q:\n%s", want, ub.String())
		}
	}
	if !strings.Contains(db1.String(), ",'=S-1,") {
		t.Errorf("dates download lacks '=S-1:\n%s", db1.String())
	}
	again := mustOpenDB(t)
	if _, err := importString(t, again, "units", "", ub.String()); err != nil {
		t.Fatalf("re-import of the units download: %v", err)
	}
	if _, err := importString(t, again, "dates", "", db1.String()); err != nil {
		t.Fatalf("re-import of the dates download: %v", err)
	}
	us2, _ := again.Units(ctx, 0)
	ds2, _, _ := again.Dates(ctx, DateFilter{})
	name := func(u Unit) string { return u.Province + "|" + u.Name + "|" + u.Notes }
	got, want := map[string]bool{}, map[string]bool{}
	for _, u := range us {
		want[name(u)] = true
	}
	for _, u := range us2 {
		got[name(u)] = true
	}
	for k := range want {
		if !got[k] {
			t.Errorf("unit %q did not come back; got %v", k, got)
		}
	}
	if len(ds2) != 1 || ds2[0].SampleCode != "=S-1" {
		t.Errorf("date came back as %+v, want sample code =S-1", ds2)
	}
}

// Text typed outside a record's form is held to the same rule: review notes, an anomaly's event name and
// notes and its rejection reason, a saved comparison's name.
func TestControlCharactersRefusedInOtherText(t *testing.T) {
	const ctl = "control character U+0000"
	db, d := seededDate(t)
	ctx := context.Background()
	_, err := db.ReviewDate(ctx, d.ID, d.Version, false, "dup\x00licate")
	wantProblem(t, err, "note", ctl)
	if _, err := db.ReviewDate(ctx, d.ID, d.Version, false, "duplicate of\nHV-1"); err != nil {
		t.Errorf("a review note over two lines refused: %v", err)
	}
	_, err = db.SaveComparison(ctx, Comparison{Name: "demo\x00", Query: "seed=1"})
	wantProblem(t, err, "name", ctl)

	db, sid := sectionForEvents(t)
	k := AnomalyKey{SectionID: sid, Series: "Hg/TOC", BaseHeightM: 20.25, TopHeightM: 23.75, Settings: "host=toc&z_min=3.5"}
	_, _, err = db.AnomalyToEvent(ctx, k, "Hg\x00 A", "")
	wantProblem(t, err, "name", ctl)
	_, _, err = db.AnomalyToEvent(ctx, k, "Hg A", "see\x00core log")
	wantProblem(t, err, "notes", ctl)
	_, err = db.RejectAnomaly(ctx, k, "noise\x00")
	wantProblem(t, err, "reason", ctl)
}
