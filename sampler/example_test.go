package sampler_test

import (
	"context"
	"fmt"

	"chord/sampler"
	"chord/sampler/targets"
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
