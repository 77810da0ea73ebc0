package web

import (
	"strings"
	"testing"
	"time"
)

func TestComparePageRendersDemo(t *testing.T) {
	srv, _ := mustServer(t)
	start := time.Now()
	status, _, body := get(t, srv, "/compare")
	t.Logf("cold %v", time.Since(start))
	if status != 200 {
		t.Fatalf("status %d: %.2000s", status, body)
	}
	start = time.Now()
	get(t, srv, "/compare")
	t.Logf("warm %v", time.Since(start))
	for _, want := range []string{"P(event after onset)", "P1", "CIE onset"} {
		if !strings.Contains(body, want) {
			t.Errorf("page lacks %q", want)
		}
	}
}
