package web

import (
	"net/http"
	"regexp"
	"sort"
	"strings"

	"coeval/views"
)

// A page asked for with settings that cannot be used answers with the same settings in a form: every
// setting of the address kept and editable, the ones at fault marked with their message beside them, and
// a button to show the page again — so fixing one setting loses none of the others.

// problemNames matches the settings a problem names at its start ("h: …", "bg_base, bg_top: …").
var problemNames = regexp.MustCompile(`^([a-z_0-9]+(?:, [a-z_0-9]+)*):\s*(.*)$`)

// settingsForm is the refused page's settings as inputs, or nil when the request is not a page read
// (a download, a form post) or has nothing to show.
func settingsForm(r *http.Request, problems []string) []views.Input {
	if r.Method != http.MethodGet || wantsJSON(r) || r.URL.Query().Get("format") != "" {
		return nil
	}
	q := r.URL.Query()
	byName := map[string]string{}
	var names []string
	for _, p := range problems {
		m := problemNames.FindStringSubmatch(p)
		if m == nil {
			continue
		}
		for _, n := range strings.Split(m[1], ", ") {
			if _, seen := byName[n]; !seen {
				names = append(names, n)
			}
			byName[n] = strings.TrimSpace(byName[n] + " " + m[2])
		}
	}
	for n := range q {
		if _, seen := byName[n]; !seen {
			names = append(names, n)
			byName[n] = ""
		}
	}
	if len(names) == 0 {
		return nil
	}
	// The settings at fault first, then the others in the order of the parameters' reference.
	order := map[string]int{}
	for i, d := range paramDocs {
		order[d.Name] = i
	}
	sort.SliceStable(names, func(i, j int) bool {
		fi, fj := byName[names[i]] != "", byName[names[j]] != ""
		if fi != fj {
			return fi
		}
		return order[names[i]] < order[names[j]]
	})
	var out []views.Input
	for _, n := range names {
		in := views.Input{Name: n, Label: settingLabel(n), Kind: "text", Value: q.Get(n), Error: byName[n]}
		if d, ok := paramDocByName(n); ok {
			in.Help = d.Meaning
			if opts := settingValues(d.Values); len(opts) > 0 {
				in.Kind = "choice"
				for _, o := range opts {
					in.Options = append(in.Options, views.Option{Value: o})
				}
			}
		}
		out = append(out, in)
	}
	return out
}

func paramDocByName(name string) (paramDoc, bool) {
	for _, d := range paramDocs {
		if d.Name == name {
			return d, true
		}
	}
	return paramDoc{}, false
}

// settingLabel is a setting's name as a label: its words, without the underscores of the address.
func settingLabel(name string) string {
	return strings.ReplaceAll(name, "_", " ")
}

// settingValues are the values a setting takes when its reference lists them (short codes separated by
// commas), else none.
func settingValues(values string) []string {
	var out []string
	for _, v := range strings.Split(values, ",") {
		v = strings.TrimSpace(v)
		if v == "" || strings.ContainsAny(v, " ()") {
			return nil
		}
		out = append(out, v)
	}
	if len(out) < 2 {
		return nil
	}
	return out
}
