package store

import "fmt"

// ReviewState is where a contributed record (a date, event, tie point or hiatus) stands in review. The
// tables hold it as text with a CHECK on these three values (migrations 001, 006, 007).
type ReviewState string

const (
	ReviewPending  ReviewState = "pending"  // waits for a curator; computations leave it out by default
	ReviewAccepted ReviewState = "accepted" // what computations use by default
	ReviewRejected ReviewState = "rejected" // kept, with the curator's reason in the review note
)

// Valid reports whether s is one of the review states.
func (s ReviewState) Valid() bool {
	switch s {
	case ReviewPending, ReviewAccepted, ReviewRejected:
		return true
	}
	return false
}

// ParseReviewState reads a review state as written in a file, form or address; the error names the
// field and the states it accepts.
func ParseReviewState(s string) (ReviewState, error) {
	if st := ReviewState(s); st.Valid() {
		return st, nil
	}
	return "", &ValidationError{[]Problem{{Column: "review_state",
		Message: fmt.Sprintf("unknown value %q; want one of %s, %s, %s", s, ReviewPending, ReviewAccepted, ReviewRejected)}}}
}

// reviewStateCell reads the review_state cell of a row (def when empty), recording a problem for an
// unknown state.
func reviewStateCell(rw row, def ReviewState) ReviewState {
	return ReviewState(rw.enum("review_state", codes(ReviewStates()), string(def)))
}
