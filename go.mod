module github.com/rhomark/rhomark

go 1.26.8

require (
	gonum.org/v1/gonum v0.17.0
	gopkg.in/yaml.v3 v3.0.1
)
