package safety

import (
	"fmt"
	"strings"

	"github.com/expr-lang/expr"
	"github.com/expr-lang/expr/vm"

	"benchtender/campaign"
)

type compiledRule struct {
	Rule
	prog *vm.Program
}

// compileRules compiles the rules' expressions against the factor names
// (with github.com/expr-lang/expr).
func compileRules(rules []Rule, space campaign.Space) ([]compiledRule, campaign.Problems) {
	var ps campaign.Problems
	space = space.Normalised()
	sample := make(campaign.Point, len(space))
	for i, f := range space {
		sample[i] = f.Min
	}
	env := space.Env(sample)
	seen := map[string]bool{}
	var out []compiledRule
	for i, r := range rules {
		key := fmt.Sprintf("rule[%d]", i)
		if !campaign.ValidName(r.Name) || seen[r.Name] {
			ps.Add(key+".name", "%q is not a valid, unique rule name", r.Name)
		}
		seen[r.Name] = true
		if r.Action != ActionHold && r.Action != ActionRefuse {
			ps.Add(key+".action", "must be %q or %q, got %q", ActionHold, ActionRefuse, r.Action)
		}
		if strings.TrimSpace(r.Message) == "" {
			ps.Add(key+".message", "say what the rule protects against; it is shown to the person signing off")
		}
		prog, err := expr.Compile(r.When, expr.Env(env), expr.AsBool())
		if err != nil {
			msg := err.Error()
			if i := strings.IndexByte(msg, '\n'); i >= 0 {
				msg = msg[:i]
			}
			ps.Add(key+".when", "%q: %s", r.When, msg)
			continue
		}
		out = append(out, compiledRule{r, prog})
	}
	return out, ps
}
