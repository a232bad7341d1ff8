package algebra

import "veneer/catalog/rdf"

// Path is a property path expression (§18.1.7).
type Path interface{ path() }

// PathLink is a single predicate IRI.
type PathLink struct{ IRI rdf.IRI }

// PathInv is ^path.
type PathInv struct{ Path Path }

// PathSeq is path1 / path2.
type PathSeq struct{ Left, Right Path }

// PathAlt is path1 | path2.
type PathAlt struct{ Left, Right Path }

// PathZeroOrMore is path*.
type PathZeroOrMore struct{ Path Path }

// PathOneOrMore is path+.
type PathOneOrMore struct{ Path Path }

// PathZeroOrOne is path?.
type PathZeroOrOne struct{ Path Path }

// PathNegated is !(iri1 | ... | ^iriN): Forward lists the excluded IRIs, Inverse
// the excluded inverse IRIs. It stands for §18.2.2.3's NPS(Forward) when Inverse
// is empty, inv(NPS(Inverse)) when Forward is empty, and their alt otherwise.
type PathNegated struct {
	Forward []rdf.IRI
	Inverse []rdf.IRI
}

var (
	_ Path = PathLink{}
	_ Path = PathInv{}
	_ Path = PathSeq{}
	_ Path = PathAlt{}
	_ Path = PathZeroOrMore{}
	_ Path = PathOneOrMore{}
	_ Path = PathZeroOrOne{}
	_ Path = PathNegated{}
)

func (PathLink) path()       {}
func (PathInv) path()        {}
func (PathSeq) path()        {}
func (PathAlt) path()        {}
func (PathZeroOrMore) path() {}
func (PathOneOrMore) path()  {}
func (PathZeroOrOne) path()  {}
func (PathNegated) path()    {}
