package rdf

// RoundTrip is roundTrip, for the tests of package rdf_test.
var RoundTrip = roundTrip
