// Package config decodes chord's TOML configuration files strictly
// (unknown keys are errors naming them) and resolves them: every default
// written out, paths made absolute, observations read, priors built.
package config
