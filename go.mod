module sinter

go 1.26

require (
	github.com/go-audio/audio v1.0.0
	github.com/go-audio/wav v1.1.0
	gonum.org/v1/gonum v0.17.0
	gopkg.in/yaml.v3 v3.0.1
)

require github.com/go-audio/riff v1.0.0 // indirect
