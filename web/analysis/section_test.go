package analysis

import (
	"context"
	"slices"
	"testing"

	"coeval/stats"
	"coeval/store"
)

// A section's defaults: its stored low-TOC threshold, or stats' default when it stores none; each
// unusable option is named by its field, and a host the section did not measure by "Host".
func TestSectionOptionsDefaultsAndErrors(t *testing.T) {
	if got := DefaultSectionOptions(store.Section{TocThresholdWtPct: 0.5}).TocMinWtPct; got != 0.5 {
		t.Errorf("stored threshold 0.5: default %v", got)
	}
	if got := DefaultSectionOptions(store.Section{}).TocMinWtPct; got != stats.DefaultMinTocWtPct {
		t.Errorf("no stored threshold: default %v, want %v", got, stats.DefaultMinTocWtPct)
	}
	for _, c := range []struct {
		option string
		edit   func(*SectionOptions)
	}{
		{"TocMinWtPct", func(o *SectionOptions) { o.TocMinWtPct = -1 }},
		{"BgWidth", func(o *SectionOptions) { o.BgWidth = 4 }},
		{"Background", func(o *SectionOptions) { o.Baseline, o.BgBaseM, o.BgTopM = "window", 5, 5 }},
		{"Draws", func(o *SectionOptions) { o.Draws = 1 }},
		{"TieLevel", func(o *SectionOptions) { o.TieLevel = "most" }},
		{"Host", func(o *SectionOptions) { o.Host = "hg" }},
	} {
		o := DefaultSectionOptions(store.Section{})
		c.edit(&o)
		if got := optionNames(o.Check()); !slices.Equal(got, []string{c.option}) {
			t.Errorf("%s: Check names %v", c.option, got)
		}
	}
	db := demoDB(t)
	ctx := context.Background()
	as, err := LoadSectionAnalyses(ctx, db, DefaultSectionOptions)
	if err != nil || len(as) == 0 {
		t.Fatalf("%d analyses: %v", len(as), err)
	}
	for _, a := range as {
		if a.Has["ts"] {
			continue
		}
		_, err := LoadSectionAnalysisByID(ctx, db, a.Sec.ID, func(sec store.Section) (SectionOptions, error) {
			o := DefaultSectionOptions(sec)
			o.Host = "ts"
			return o, nil
		})
		if got := optionNames(err); !slices.Equal(got, []string{"Host"}) {
			t.Errorf("%s has no TS: host ts names %v (%v)", a.Sec.Name, got, err)
		}
		return
	}
	t.Log("every demo section measured TS: the unmeasured host is not checked")
}
