package web

import (
	"fmt"
	"net/http"
	"net/url"
	"strings"

	"coeval/views"
)

// The answer on a detected anomaly, as on an event's page (eventanswer.go): its model age and, for every
// province with dates near it, the pulses it could belong to, each number a row of the comparison page
// with its default choices and detected anomalies compared. The anomalies page shows the most likely
// pulse of each anomaly with the whole answer in the cell's title and a link to that comparison.

// anomalyAnswerColumn adds the column "Could belong to" to the anomaly table of b. The comparison finds
// anomalies with the section's default choices, so the column is shown only on the page with those.
func (s *Server) anomalyAnswerColumn(r *http.Request, a *sectionAnalysis, b *views.Block) {
	if s.router == nil || len(r.URL.Query()) > 0 || len(b.Tables) == 0 {
		return
	}
	t := &b.Tables[0]
	t.Columns = append(t.Columns, views.Column{Label: "Could belong to", Title: "the pulse of any province most likely to hold the anomaly, from the comparison with its default choices"})
	as := s.answers(r)
	for i, an := range a.Anomalies {
		c := views.Cell{Text: "—", Title: "no model age: it lies outside the section's tie points"}
		if an.Age != nil {
			ans := eventAnswer{Age: &answerAge{Median: an.Age.Age.Median, Lo95: an.Age.Age.Lo95, Hi95: an.Age.Age.Hi95}}
			ans, err := as.answerAt(ans, fmt.Sprintf("A%d.%d", a.Sec.ID, an.Number), url.Values{"anomalies": {"1"}})
			c = anomalyAnswerCell(ans, err)
		}
		if i < len(t.Rows) {
			t.Rows[i] = append(t.Rows[i], c)
		}
	}
	t.Notes = append(t.Notes, "“Could belong to” is the answer an event's page gives, for each detected anomaly: the comparison with its default choices (smoothing, calibration, the section's age model), detected anomalies compared. Anomalies of one section share its age model: their answers are not independent.")
}

// anomalyAnswerCell is the most likely pulse and its P(within), linked to the comparison, with the
// answer's sentence as its title.
func anomalyAnswerCell(a eventAnswer, err error) views.Cell {
	if err != nil {
		return views.Cell{Text: "not compared", Title: err.Error()}
	}
	title := strings.ReplaceAll(a.Sentence, "this event", "this anomaly")
	if len(a.Pulses) == 0 {
		return views.Cell{Text: "no pulse near", Title: title}
	}
	p := a.Pulses[0]
	q := url.Values{}
	for k, v := range p.compareQuery {
		q[k] = v
	}
	return views.Cell{Text: fmt.Sprintf("%s of %s (%s)", p.pulseName(), p.Province, p.pText(p.Within, p.WithinSE)),
		URL: "/compare?" + q.Encode(), Title: title}
}
