module github.com/rhomark/rhomark

go 1.26.8

require (
	github.com/expr-lang/expr v1.17.8
	gonum.org/v1/gonum v0.17.0
	gopkg.in/yaml.v3 v3.0.1
)
