package web

import (
	"html"
	"net/http"
	"regexp"
	"sort"
	"strings"
	"testing"
)

// wordPages are the pages whose text a scientist reads: every page kind, signed out.
var wordPages = append(append([]string{}, phonePages...), "/dates/1/history", "/changes/1", "/sections/1/agemodel?draws=200",
	"/provinces/1/timeline?reps=200&adaptive=1&pdp=1", "/compare?n=1000&sens=1&draws=100&reps=100", "/compare?rows=both&n=1000&sens=0&draws=100&reps=100", "/compare/saved")

var (
	// Parts of a page that are not read as prose: scripts, styles, code samples, links' addresses (tags
	// are dropped below, so a link's text stays and is checked).
	notProse = regexp.MustCompile(`(?s)<script.*?</script>|<style.*?</style>|<code.*?</code>|<pre.*?</pre>|<kbd.*?</kbd>`)
	tag      = regexp.MustCompile(`(?s)<[^>]*>`)
	// Developer words: an address parameter written as name=value, a Go identifier, a stored code.
	developerWords = []struct {
		what string
		re   *regexp.Regexp
	}{
		{"address syntax", regexp.MustCompile(`\b[a-z][a-z_]*=`)},
		{"a Go identifier", regexp.MustCompile(`\b(stats|store|web|views|analysis|http|sql)\.[A-Z]\w*`)},
		{"a stored code", regexp.MustCompile(`\b[a-z]+_[a-z_]+\b|\b(sj77|min00|renne10|renne11)-fcs\d+\b|\bsilverman-robust\b`)},
		{"the data stamp", regexp.MustCompile(`(?i)\bdata stamp\b|\bas of change \d`)},
		{"a rule's code", regexp.MustCompile(`\bpolicy (never|mswd-gt-1|p-lt-0\.05)\b|\boutlier rule (mswd|chauvenet|gesd)\b|\bISJ: ζ\(t\)`)},
	}
)

// pageProse is the text of a page as it reads: tags dropped, entities decoded, spaces collapsed.
func pageProse(page string) string {
	s := notProse.ReplaceAllString(page, " ")
	s = tag.ReplaceAllString(s, " ")
	return strings.Join(strings.Fields(html.UnescapeString(s)), " ")
}

// Pages speak to scientists: the text of every page kind (its figures' text included) holds no address
// syntax (name=value), no Go identifier, no stored code (upb_idtims, a calibration's code, a bandwidth
// rule's code) and no "data stamp". Codes stay in addresses, downloads and code samples, where scripts
// need them.
func TestPagesHoldNoDeveloperWords(t *testing.T) {
	srv, _ := mustServer(t)
	for _, p := range wordPages {
		if strings.HasPrefix(p, "/help/files/") || strings.HasPrefix(p, "/help/downloads/") || p == "/help/addresses" {
			continue // the reference of the files' and downloads' columns and the addresses' parameters: the codes are their subject
		}
		status, _, body := get(t, srv, p)
		if status != http.StatusOK {
			t.Errorf("%s: status %d", p, status)
			continue
		}
		prose := pageProse(body)
		for _, w := range developerWords {
			found := map[string]bool{}
			for _, m := range w.re.FindAllStringIndex(prose, -1) {
				found[prose[max(0, m[0]-30):min(len(prose), m[1]+30)]] = true
			}
			var list []string
			for k := range found {
				list = append(list, "…"+k+"…")
			}
			sort.Strings(list)
			if len(list) > 0 {
				t.Errorf("%s: %s in the page's text (%d): %s", p, w.what, len(list), strings.Join(list[:min(len(list), 6)], " | "))
			}
		}
	}
}
