package planner

import (
	"context"
)

// portfolio makes one run in every runs a Thompson draw (thompson.go) and
// the others by main (expected improvement). Expected improvement closes
// in on a well quickly but, once most runs sit in one well, it is
// confident that the rest of the box holds nothing better and stays
// there; a Thompson draw goes wherever the model still gives the optimum
// a fair chance of being, so the campaign keeps sampling the other wells
// in proportion to how likely they are to hold the optimum. Alternating
// acquisitions on a fixed schedule is common practice; the share is
// ThompsonEvery, chosen on the suite's tuning set (docs/planner-suite.md).
type portfolio struct {
	every, nInit int
	main         strategy
}

func (f portfolio) choose(ctx context.Context, s *situation) (choice, error) {
	if f.every > 0 && (s.index-f.nInit)%f.every == f.every-1 {
		return thompson{}.choose(ctx, s)
	}
	return f.main.choose(ctx, s)
}
