// Package verify checks the operations kit in deploy against veneer itself:
// the metrics the server registers against the contract in deploy, the
// Dockerfile against the build it describes (run with the same flags), and
// the example configurations against the binary that reads them. It holds no
// code besides its tests; it is a package of its own so that the static
// checks of deploy run even while the server does not build.
package verify
