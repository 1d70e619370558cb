package config

import (
	"fmt"
	"slices"
	"strings"
)

// Without makes c the reduced model of a detection test: the log10 mixing
// ratio of each gas named is held at its uniform prior's lower edge (a
// fixed parameter) instead of sampled. This is the nested model M0 of the
// Savage-Dickey density ratio (report/detection.go), so the evidence ratio
// of the full and the reduced model is the Bayes factor that ratio
// estimates from one run. Each gas must have a free log10_vmr parameter
// with a uniform prior; errors name the gas or the parameter.
func (c *Config) Without(gases []string) error {
	seen := map[string]bool{}
	for _, g := range gases {
		if seen[g] {
			return fmt.Errorf("without %s: the gas is named twice", g)
		}
		seen[g] = true
		i := slices.IndexFunc(c.Parameters, func(p ParameterConfig) bool { return p.Sets == string(QLog10VMR) && p.Gas == g })
		if i < 0 {
			var free []string
			for _, p := range c.Parameters {
				if p.Sets == string(QLog10VMR) && p.Prior != "fixed" {
					free = append(free, p.Gas)
				}
			}
			if len(free) == 0 {
				free = []string{"none"}
			}
			return fmt.Errorf("without %s: the configuration has no log10_vmr parameter of %s (gases with one: %s)", g, g, strings.Join(free, ", "))
		}
		p := &c.Parameters[i]
		key := fmt.Sprintf("parameters[%d]", i+1)
		switch {
		case p.Prior == "fixed":
			return keyErr(key+".prior", "without %s: the mixing ratio of %s is already fixed; the reduced model needs it free in the full model", g, g)
		case p.Prior != "uniform" || p.Low == nil:
			return keyErr(key+".prior", "without %s: the prior of %s's log10 mixing ratio is %q; the reduced model holds it at a uniform prior's lower edge (the Savage-Dickey nested model), so give it a uniform prior", g, g, p.Prior)
		}
		low := *p.Low
		p.Prior, p.Value = "fixed", &low
		p.Low, p.High, p.Mean, p.Sigma = nil, nil, nil, nil
	}
	return nil
}
