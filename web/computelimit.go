package web

import (
	"context"
	"fmt"
)

// The largest computations are for signed-in users: without an account the comparison runs at most at
// its default numbers of joint draws, age-model draws and bootstrap replicates (its largest choices take
// a minute of both processor cores). An abandoned request stops its computation: analysis.Compare asks
// the request's context between sections, alternatives and sets, and before every bootstrap replicate.

// anonymousComputeLimits refuses, for a visitor who is not signed in, numbers above the defaults, each
// named with its limit and what to do.
func anonymousComputeLimits(ctx context.Context, ch compareChoice) error {
	if _, ok := currentUser(ctx); ok {
		return nil
	}
	var problems []string
	check := func(param, what string, got, limit, max int) {
		if got > limit {
			problems = append(problems, fmt.Sprintf("%s: %d %s need signing in; without an account at most %d (the default). Sign in for up to %d, or lower the number.", param, got, what, limit, max))
		}
	}
	check("n", "joint draws", ch.N, defaultCompareDraws, maxCompareDraws)
	check("draws", "age-model draws", ch.ModelDraws, defaultSectionDraws, maxSectionDraws)
	check("reps", "bootstrap replicates", ch.Dens.Reps, defaultReps, maxReps)
	if len(problems) == 0 {
		return nil
	}
	return badRequest{message: "This comparison is larger than visitors may ask for. Sign in, or lower these numbers and reload:", problems: problems}
}
