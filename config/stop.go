package config

// StopRule is a run's stopping rule: exactly one of its fields is set.
type StopRule struct {
	Steps          int     `json:"steps,omitempty"`           // total steps of the run
	Budget         float64 `json:"budget,omitempty"`          // total sampling seconds
	UntilConverged bool    `json:"until_converged,omitempty"` // sampler.Convergence with its defaults
}
