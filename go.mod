module tandem

go 1.26.8

require (
	filippo.io/age v1.3.2
	github.com/BurntSushi/toml v1.6.0
	github.com/google/go-cmp v0.7.0
	github.com/rogpeppe/go-internal v1.16.0
	golang.org/x/crypto v0.59.0
	gonum.org/v1/gonum v0.17.0
)

require (
	filippo.io/edwards25519 v1.2.0 // indirect
	filippo.io/hpke v0.4.0 // indirect
	golang.org/x/sys v0.50.0 // indirect
	golang.org/x/tools v0.49.0 // indirect
)
