package criteria_test

import (
	"context"
	"fmt"

	"github.com/kgauge/kgauge/criteria"
)

// Ruspini's data (Ruspini 1970) has four groups (Kaufman & Rousseeuw 1990).
func ExampleEvaluate() {
	p, err := loadPoints("../testdata/refsets/ruspini.csv")
	if err != nil {
		fmt.Println(err)
		return
	}
	opt := criteria.DefaultOptions()
	opt.MaxK = 10
	r, err := criteria.Evaluate(context.Background(), criteria.ExactSummary(p), opt)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println("k =", r.Verdict.K, "structure:", r.Verdict.Structure)
	// Output: k = 4 structure: true
}
