package algebra

import (
	"errors"
	"fmt"

	"veneer/rewrite/sparql"
)

// W3CVerdict says whether err, what veneer made of the query of a W3C SPARQL
// test (nil when sparql.Parse and Translate both accepted it), is what the
// test's type requires. testType is the local name of the test's rdf:type in
// the test-manifest vocabulary (rdf-tests/ns, mf:): a positive syntax test
// and an evaluation test need a valid query; a negative syntax test needs a
// syntax error, and so does a negative update syntax test; a positive update
// syntax test needs a valid update request, which this read-only endpoint
// refuses with sparql.ErrUpdate. The problem is nil when the outcome is the
// required one. known is false for a type that has no query to judge
// (protocol and service description tests); call with a nil err to ask.
//
// The W3C test runner (conformance) and this package's own W3C tests share it,
// so that both apply the same rules.
func W3CVerdict(testType string, err error) (problem error, known bool) {
	update := errors.Is(err, sparql.ErrUpdate)
	switch testType {
	case "PositiveSyntaxTest", "PositiveSyntaxTest11", "QueryEvaluationTest", "CSVResultFormatTest":
		if err != nil {
			return fmt.Errorf("rejected a valid query: %w", err), true
		}
	case "NegativeSyntaxTest", "NegativeSyntaxTest11", "NegativeUpdateSyntaxTest11":
		switch {
		case err == nil:
			return errors.New("accepted an invalid request"), true
		case update:
			return fmt.Errorf("refused a malformed request as a valid update: %w", err), true
		}
	case "PositiveUpdateSyntaxTest11":
		switch {
		case err == nil:
			return errors.New("accepted an update request instead of refusing it as read-only"), true
		case !update:
			return fmt.Errorf("rejected a valid update request as malformed: %w", err), true
		}
	default:
		return nil, false
	}
	return nil, true
}
