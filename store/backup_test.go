package store

import (
	"context"
	"fmt"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"
)

// A backup taken while another connection keeps writing is a consistent database: it passes
// PRAGMA integrity_check, opens, and holds a prefix of the writes.
func TestBackupWhileWriting(t *testing.T) {
	ctx := context.Background()
	db := mustOpenDB(t)
	if _, err := importString(t, db, "sections", "", "section\nS\n"); err != nil {
		t.Fatal(err)
	}
	stop := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	writes := 0
	firstDone := make(chan struct{})
	var once sync.Once
	landed := func() { once.Do(func() { close(firstDone) }) }
	go func() {
		defer wg.Done()
		defer landed() // a writer that fails does not leave the backup waiting
		for i := 0; ; i++ {
			select {
			case <-stop:
				return
			default:
			}
			body := fmt.Sprintf("province,unit,sample_code,method,interpretation,age_ma,sigma_ma,sigma_level\nP,U,W-%d,upb_idtims,eruption,150,0.1,2\n", i)
			if _, err := db.ImportDates(ctx, "w.csv", strings.NewReader(body)); err != nil {
				t.Errorf("write %d: %v", i, err)
				return
			}
			writes++
			landed()
		}
	}()
	// The backup starts once a write has landed and while others go on (on a loaded machine the first
	// write can take longer than any fixed pause).
	<-firstDone
	time.Sleep(20 * time.Millisecond)
	path := filepath.Join(t.TempDir(), "snapshot.db")
	if err := db.Backup(ctx, path); err != nil {
		t.Fatal(err)
	}
	close(stop)
	wg.Wait()
	snap, err := Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	defer snap.Close()
	var check string
	if err := snap.db.QueryRowContext(ctx, `PRAGMA integrity_check`).Scan(&check); err != nil || check != "ok" {
		t.Fatalf("integrity_check: %q %v", check, err)
	}
	c, err := snap.Counts(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if c.Dates < 1 || c.Dates > writes || c.Sections != 1 {
		t.Errorf("snapshot holds %d dates (writer made %d) and %d sections", c.Dates, writes, c.Sections)
	}
	if err := db.Backup(ctx, path); err == nil {
		t.Error("a backup over an existing file was allowed")
	}
}
