package planner

import (
	"context"
	"fmt"
	"math/rand/v2"

	"benchtender/campaign"
	"benchtender/planner/gp"
)

// A strategy picks the next run once a model is fitted. Each one is a
// file of its own (improvement.go, bound.go, thompson.go, portfolio.go),
// chosen by Config.Acquisition (strategyFor). A strategy returns
// errNoCandidate when every point it would consider is barred, and
// otherwise only context errors.
type strategy interface {
	choose(ctx context.Context, s *situation) (choice, error)
}

// choice is a strategy's answer.
type choice struct {
	// u is the next point in the unit box.
	u campaign.Point
	// score is the criterion's own (larger is better).
	score float64
	// method is the label the proposal carries.
	method string
	// logEI is the largest log expected improvement found, when the
	// strategy searched for it (NaN otherwise).
	logEI float64
}

// situation is what a strategy is given for one proposal.
type situation struct {
	p *Planner
	// model is the surrogate conditioned on the pending runs (believer),
	// in modelled (warped) units.
	model *gp.Model
	// best is the lowest posterior mean at a run, in the same units.
	best float64
	// feasible is the chance that a run gives a usable value (nil: no run
	// has failed).
	feasible func([]float64) float64
	// allowed bars points too close to a run or a pending one.
	allowed func([]float64) bool
	// around are the runs, best first, where local candidates are
	// scattered.
	around [][]float64
	// index counts the proposals made before this one.
	index int
	rng   *rand.Rand
}

// maximise finds a high score among the allowed, feasible points.
func (s *situation) maximise(ctx context.Context, score scorer) (campaign.Point, float64, error) {
	return s.p.maximise(ctx, score.where(s.allowed), s.around, s.rng)
}

// strategyFor returns the strategy the config names (validated).
func (p *Planner) strategyFor() strategy {
	switch p.cfg.Acquisition {
	case AcqConfidenceBound:
		return bound{beta: p.cfg.Beta}
	case AcqProbability:
		return improvement{probability: true}
	case AcqThompson:
		return thompson{}
	case AcqEntropy:
		return entropy{}
	case AcqPortfolio:
		return portfolio{every: p.cfg.ThompsonEvery, nInit: p.nInit, main: improvement{shortlist: p.cfg.Shortlist}}
	case AcqExpectedImprovement:
		return improvement{shortlist: p.cfg.Shortlist}
	}
	panic(fmt.Sprintf("planner: unknown acquisition %q", p.cfg.Acquisition))
}
