package web

import (
	"cmp"
	"errors"
	"net/http"
	"strings"

	"coeval/store"
)

func (s *Server) handleRevisionRevert(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	rev, err := s.store.RevisionByID(r.Context(), id)
	if err != nil {
		return err
	}
	if !store.Restorable(rev.RecordType) {
		return badRequest{message: "Changes of this kind of record (" + rev.RecordType + ") cannot be restored one by one; undo the whole change from the feed of changes."}
	}
	err = s.store.RevertRevision(r.Context(), id)
	if errors.Is(err, store.ErrConflict) {
		return conflictError{"There is nothing to restore: the record this change created no longer exists."}
	}
	if err := refusal(strings.ReplaceAll(rev.RecordType, "_", " "), "restored", err); err != nil {
		return err
	}
	http.Redirect(w, r, cmp.Or(historyURL(rev.RecordType, rev.RecordID), "/changes"), http.StatusSeeOther)
	return nil
}
