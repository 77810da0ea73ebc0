package analysis

import (
	"go/parser"
	"go/token"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// The package sits between the data and the pages: it must not reach up into HTTP, the web package or
// the views (the layering rule of the project's DEVELOPERS.md).
func TestAnalysisImportsNoHTTPWebOrViews(t *testing.T) {
	files, err := filepath.Glob("*.go")
	if err != nil || len(files) == 0 {
		t.Fatalf("no Go files: %v", err)
	}
	forbidden := []string{"net/http", "coeval/web", "coeval/views", "github.com/go-chi/chi/v5"}
	for _, f := range files {
		src, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		file, err := parser.ParseFile(token.NewFileSet(), f, src, parser.ImportsOnly)
		if err != nil {
			t.Fatal(err)
		}
		for _, imp := range file.Imports {
			path, _ := strconv.Unquote(imp.Path.Value)
			for _, bad := range forbidden {
				if path == bad || strings.HasPrefix(path, bad+"/") {
					t.Errorf("%s imports %s", f, path)
				}
			}
		}
	}
}

func TestOptionErrorsCollectAndUnwrap(t *testing.T) {
	var errs OptionErrors
	if errs.Err() != nil {
		t.Fatal("no problems must give a nil error")
	}
	errs = append(errs, &OptionError{Option: "TocMinWtPct", Problem: "must be positive"})
	got := AsOptionErrors(errs.Err())
	if len(got) != 1 || got[0].Option != "TocMinWtPct" {
		t.Fatalf("got %v", got)
	}
	if one := AsOptionErrors(&OptionError{Option: "Level", Problem: "x"}); len(one) != 1 {
		t.Fatalf("a single OptionError must unwrap: %v", one)
	}
}
