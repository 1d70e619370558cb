package sampler_test

import (
	"context"
	"fmt"
	"math"

	"chord/sampler"
	"chord/sampler/targets"

	"gonum.org/v1/gonum/stat/distuv"
)

func ExampleRun() {
	target := targets.StdNormal{D: 3}
	st, err := sampler.InitBall(context.Background(), target, []float64{0, 0, 0}, []float64{1, 1, 1},
		sampler.InitSettings{Walkers: 16, Seed: 42})
	if err != nil {
		fmt.Println(err)
		return
	}
	st, res, err := sampler.Run(context.Background(), target, st, sampler.Settings{MaxSteps: 500}, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(res.Stop, st.Step, st.Moves)
	// Output: step count reached 500 stretch(a=2)
}

// ExampleRunNested computes the evidence of a 2-d standard normal
// likelihood under the uniform prior [-5, 5]^2, where
// ln Z = ln(2 pi / 100) = -2.76 (the mass outside the box is negligible).
func ExampleRunNested() {
	target := targets.StdNormal{D: 2}
	prior := []sampler.Quantiler{distuv.Uniform{Min: -5, Max: 5}, distuv.Uniform{Min: -5, Max: 5}}
	st, err := sampler.InitNested(context.Background(), target, prior, sampler.NestedInit{Live: 200, Seed: 42})
	if err != nil {
		fmt.Println(err)
		return
	}
	st, res, err := sampler.RunNested(context.Background(), target, prior, st, sampler.NestedSettings{}, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	truth := math.Log(2 * math.Pi / 100)
	fmt.Println(res.Stop, st.Finished, math.Abs(res.LogZ-truth) < 3*res.LogZErr)
	// Output: evidence converged true true
}
