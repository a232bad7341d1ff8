package conformance

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"sort"

	"veneer/catalog"
	"veneer/catalog/direct"
	"veneer/catalog/r2rml"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
)

// The RDB2RDF suite: the W3C "R2RML and Direct Mapping Test Cases". Each test
// directory D000…D025 holds a manifest.ttl describing one database (a
// rdb2rdftest:DataBase with its rdb2rdftest:sqlScriptFile) and the tests over
// it: rdb2rdftest:R2RML tests with a rdb2rdftest:mappingDocument, and
// rdb2rdftest:DirectMapping tests; each says by rdb2rdftest:hasExpectedOutput
// whether it expects the dataset in rdb2rdftest:output or an error.
const (
	rdb2rdfNS        = "http://purl.org/NET/rdb2rdf-test#"
	rdb2rdfDatabase  = rdf.IRI(rdb2rdfNS + "DataBase")
	rdb2rdfR2RML     = rdf.IRI(rdb2rdfNS + "R2RML")
	rdb2rdfDirect    = rdf.IRI(rdb2rdfNS + "DirectMapping")
	rdb2rdfScript    = rdf.IRI(rdb2rdfNS + "sqlScriptFile")
	rdb2rdfOfDB      = rdf.IRI(rdb2rdfNS + "database")
	rdb2rdfMapping   = rdf.IRI(rdb2rdfNS + "mappingDocument")
	rdb2rdfHasOutput = rdf.IRI(rdb2rdfNS + "hasExpectedOutput")
	rdb2rdfOutput    = rdf.IRI(rdb2rdfNS + "output")
	rdb2rdfFailMsg   = rdf.IRI(rdb2rdfNS + "failMessage")
	// The manifests take dcterms from the Dublin Core elements namespace.
	dcIdentifier = rdf.IRI("http://purl.org/dc/elements/1.1/identifier")
)

// directBase is the base IRI of the Direct Mapping tests. The manifests do not
// state it; the test cases document names it (from memory), and every
// directGraph.ttl of the suite declares it as its @base.
const directBase = "http://example.com/base/"

// RDB2RDF is the suite "rdb2rdf": the RDB2RDF test cases under
// rdb2rdf-tests/D*, each directory a group whose database is made by its
// create.sql.
func RDB2RDF() Suite { return rdb2rdfSuite{} }

type rdb2rdfSuite struct{}

func (rdb2rdfSuite) Name() string        { return "rdb2rdf" }
func (rdb2rdfSuite) NeedsDatabase() bool { return true }

func (rdb2rdfSuite) Load(dir string) ([]*Group, error) {
	root := filepath.Join(dir, "rdb2rdf-tests")
	dirs, err := filepath.Glob(filepath.Join(root, "D*"))
	if err != nil {
		return nil, err
	}
	if len(dirs) == 0 {
		return nil, fmt.Errorf("no test directories D* under %s", root)
	}
	sort.Strings(dirs)
	var groups []*Group
	for _, d := range dirs {
		g, err := loadRDB2RDFDir(d)
		if err != nil {
			return nil, err
		}
		groups = append(groups, g)
	}
	return groups, nil
}

// loadRDB2RDFDir reads one test directory's manifest.
func loadRDB2RDFDir(dir string) (*Group, error) {
	m, err := ReadManifest(filepath.Join(dir, "manifest.ttl"))
	if err != nil {
		return nil, err
	}
	dbs := m.OfType(rdb2rdfDatabase)
	if len(dbs) != 1 {
		return nil, fmt.Errorf("%s: %d resources of type rdb2rdftest:DataBase, want one", m.Path, len(dbs))
	}
	db := dbs[0]
	script, err := m.File(db, rdb2rdfScript)
	if err != nil {
		return nil, err
	}
	g := &Group{
		Name: filepath.Base(dir),
		Setup: func(ctx context.Context, sc *Scratch) error {
			src, err := os.ReadFile(script)
			if err != nil {
				return err
			}
			return sc.Load(ctx, filepath.Base(script), src)
		},
	}
	for _, kind := range []rdf.IRI{rdb2rdfR2RML, rdb2rdfDirect} {
		for _, subj := range m.OfType(kind) {
			c, err := readRDB2RDFCase(m, subj, db, kind)
			if err != nil {
				return nil, err
			}
			g.Tests = append(g.Tests, Test{ID: c.id, Run: c.run})
		}
	}
	return g, nil
}

// rdb2rdfCase is one R2RML or Direct Mapping test.
type rdb2rdfCase struct {
	id string
	// mapping is the R2RML document; empty for a Direct Mapping test.
	mapping string
	// output is the expected dataset's file; empty when an error is expected.
	output string
	// failMessage is the manifest's description of the expected error.
	failMessage string
}

func readRDB2RDFCase(m *Manifest, subj, db rdf.Term, kind rdf.IRI) (*rdb2rdfCase, error) {
	c := &rdb2rdfCase{}
	var err error
	if c.id, err = m.String(subj, dcIdentifier); err != nil {
		return nil, err
	}
	if on, err := m.Object(subj, rdb2rdfOfDB); err != nil {
		return nil, err
	} else if on != db {
		return nil, m.Errorf(subj, "rdb2rdftest:database is %v, not the manifest's database %v", on, db)
	}
	if kind == rdb2rdfR2RML {
		if c.mapping, err = m.File(subj, rdb2rdfMapping); err != nil {
			return nil, err
		}
	}
	hasOutput, err := m.Bool(subj, rdb2rdfHasOutput)
	if err != nil {
		return nil, err
	}
	if hasOutput {
		if c.output, err = m.File(subj, rdb2rdfOutput); err != nil {
			return nil, err
		}
	} else if len(m.Objects(subj, rdb2rdfFailMsg)) > 0 {
		if c.failMessage, err = m.String(subj, rdb2rdfFailMsg); err != nil {
			return nil, err
		}
	}
	return c, nil
}

// run runs the test on the group's database.
func (c *rdb2rdfCase) run(ctx context.Context, sc *Scratch) error {
	src, err := sc.Source(ctx)
	if err != nil {
		return err
	}
	quads, err := c.dataset(ctx, src)
	if c.output == "" {
		switch {
		case err == nil:
			return fmt.Errorf("expected an error (%s), got a dataset of %d quads", c.expectedFailure(), len(quads))
		case !mappingError(err):
			return fmt.Errorf("expected an error (%s), failed for another reason: %w", c.expectedFailure(), err)
		}
		return FailedAsExpected(err)
	}
	if err != nil {
		return err
	}
	want, err := readExpected(c.output)
	if err != nil {
		return err
	}
	return CompareDatasets(want, quads)
}

func (c *rdb2rdfCase) expectedFailure() string {
	if c.failMessage != "" {
		return c.failMessage
	}
	return "hasExpectedOutput false"
}

// dataset builds the test's catalog, from the mapping document or by the
// Direct Mapping of the database's schema, and reads its dataset back.
func (c *rdb2rdfCase) dataset(ctx context.Context, src source.Source) ([]rdf.Quad, error) {
	var cat *catalog.Catalog
	if c.mapping != "" {
		var err error
		if cat, err = r2rml.LoadFiles(c.mapping); err != nil {
			return nil, &StageError{Stage: "loading the mapping", Err: err}
		}
	} else {
		schema, err := source.Introspect(ctx, src, "")
		if err != nil {
			return nil, &StageError{Stage: "introspecting the schema", Err: err}
		}
		if cat, err = direct.Map(schema, directBase); err != nil {
			return nil, &StageError{Stage: "building the Direct Mapping", Err: err}
		}
	}
	return MappedDataset(ctx, src, cat)
}

// readExpected reads an expected dataset: N-Quads (mapped*.nq) or Turtle
// (directGraph.ttl, whose triples are the default graph).
func readExpected(path string) ([]rdf.Quad, error) {
	src, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var doc *rdf.Document
	if filepath.Ext(path) == ".ttl" {
		doc, err = rdf.ParseTurtle(path, src, "")
	} else {
		doc, err = rdf.ParseNQuads(path, src)
	}
	if err != nil {
		return nil, fmt.Errorf("reading the expected output: %w", err)
	}
	return doc.Quads(), nil
}
