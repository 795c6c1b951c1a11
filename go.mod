module github.com/rhomark/rhomark

go 1.26.8

require (
	github.com/montanaflynn/stats v0.14.0 // indirect
	gonum.org/v1/gonum v0.17.0 // indirect
	gopkg.in/yaml.v3 v3.0.1 // indirect
)
