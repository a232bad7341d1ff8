package sparql

import "veneer/catalog/rdf"

// Pos is a byte offset into the query text.
type Pos int

// Query is a parsed SPARQL query (§19.8 rule [2]). IRIs in the tree are already
// resolved against BASE and expanded from prefixed names; the spelling is kept
// only for printing.
type Query struct {
	// Source is the query text the positions refer to.
	Source   string
	Prologue []*Decl
	Form     Form
	// Select is the SELECT clause of a SELECT query.
	Select *SelectClause
	// Template is the CONSTRUCT template; with ShortConstruct it is also the
	// pattern (CONSTRUCT WHERE { ... }) and Where is nil.
	Template       []*TriplesSameSubject
	ShortConstruct bool
	// Describe lists the resources of DESCRIBE (each a *Var or *IRI); empty with
	// DescribeAll for DESCRIBE *.
	Describe    []Term
	DescribeAll bool
	Dataset     []*DatasetClause
	// Where is the query pattern; nil for DESCRIBE without WHERE and for the
	// short CONSTRUCT form.
	Where     *GroupPattern
	Modifiers Modifiers
	// Values is the trailing VALUES clause, or nil.
	Values *ValuesBlock
	// Data lists every VALUES block of the query in the order of the text;
	// block i has Block i+1.
	Data []*ValuesBlock
	// FormPos is the position of the query form keyword.
	FormPos Pos
}

// Errorf returns an error at pos in the query's text, formatted like the
// parser's own errors. Later stages (translation) use it to report problems.
func (q *Query) Errorf(pos Pos, format string, args ...any) *SyntaxError {
	return newError(q.Source, pos, format, args...)
}

// Form is the query form.
type Form int

// The four query forms.
const (
	FormSelect Form = iota + 1
	FormConstruct
	FormDescribe
	FormAsk
)

// Decl is a BASE or PREFIX declaration (rules [5], [6]). IRI is the resolved
// IRI; Prefix is empty for BASE (and for "PREFIX :" too, with IsPrefix set).
type Decl struct {
	Pos      Pos
	IsPrefix bool
	Prefix   string
	IRI      rdf.IRI
}

// SelectClause is rule [9].
type SelectClause struct {
	Pos      Pos
	Distinct bool
	Reduced  bool
	Star     bool
	Items    []*SelectItem
}

// SelectItem is a projected variable, or (Expr AS Var) when Expr is not nil.
type SelectItem struct {
	Pos  Pos
	Expr Expr
	Var  *Var
}

// DatasetClause is FROM iri or FROM NAMED iri (rules [13]-[16]).
type DatasetClause struct {
	Pos   Pos
	Named bool
	IRI   *IRI
}

// Modifiers are the solution modifiers (rule [18]) of a query or sub-select.
type Modifiers struct {
	GroupBy []*GroupCondition
	Having  []Expr
	OrderBy []*OrderCondition
	// Limit and Offset are -1 when absent.
	Limit     int64
	Offset    int64
	LimitPos  Pos
	OffsetPos Pos
}

// GroupCondition is rule [20]; Var is set for (Expr AS Var). A plain variable
// condition has Expr set to that *Var and Var nil.
type GroupCondition struct {
	Pos  Pos
	Expr Expr
	Var  *Var
}

// OrderCondition is rule [24].
type OrderCondition struct {
	Pos  Pos
	Expr Expr
	Desc bool
}

// ValuesBlock is inline data (rules [61]-[65]): one row per solution, each
// value a *IRI, a *Literal or nil for UNDEF.
type ValuesBlock struct {
	Pos  Pos
	Vars []*Var
	Rows [][]Term
	// RowPos holds the position of each row.
	RowPos []Pos
	// Block numbers the query's VALUES blocks from 1 in the order of the text.
	Block int
	// Body spans the data: from the '{' to the byte after the closing '}'.
	Body [2]Pos
}

// SubSelect is a nested SELECT (rule [8]).
type SubSelect struct {
	Pos       Pos
	Select    *SelectClause
	Where     *GroupPattern
	Modifiers Modifiers
	Values    *ValuesBlock
}

// GroupPattern is rule [53]: either a sub-select, or a sequence of elements.
type GroupPattern struct {
	Pos Pos // the '{'
	End Pos // the '}'
	Sub *SubSelect
	// Elems are the elements in order; consecutive triples blocks stay separate
	// when something stood between them.
	Elems []Pattern
}

// Pattern is an element of a group graph pattern. The interface is sealed.
type Pattern interface {
	Position() Pos
	pattern()
}

// TriplesBlock is rule [55]: triples (possibly with property paths) written
// without anything else between them.
type TriplesBlock struct {
	Pos     Pos
	Triples []*TriplesSameSubject
}

// GroupOrUnion is rule [67]: a group, or groups joined by UNION.
type GroupOrUnion struct {
	Pos    Pos
	Groups []*GroupPattern
}

// Optional is OPTIONAL { ... }.
type Optional struct {
	Pos     Pos
	Pattern *GroupPattern
}

// Minus is MINUS { ... }.
type Minus struct {
	Pos     Pos
	Pattern *GroupPattern
}

// Graph is GRAPH name { ... }; Name is a *Var or *IRI.
type Graph struct {
	Pos     Pos
	Name    Term
	Pattern *GroupPattern
}

// Service is SERVICE [SILENT] name { ... }; Name is a *Var or *IRI.
type Service struct {
	Pos     Pos
	Silent  bool
	Name    Term
	Pattern *GroupPattern
}

// Filter is FILTER constraint.
type Filter struct {
	Pos  Pos
	Expr Expr
}

// Bind is BIND (expr AS var).
type Bind struct {
	Pos  Pos
	Expr Expr
	Var  *Var
}

// InlineData is VALUES inside a group.
type InlineData struct {
	Pos    Pos
	Values *ValuesBlock
}

var (
	_ Pattern = (*TriplesBlock)(nil)
	_ Pattern = (*GroupOrUnion)(nil)
	_ Pattern = (*Optional)(nil)
	_ Pattern = (*Minus)(nil)
	_ Pattern = (*Graph)(nil)
	_ Pattern = (*Service)(nil)
	_ Pattern = (*Filter)(nil)
	_ Pattern = (*Bind)(nil)
	_ Pattern = (*InlineData)(nil)
)

func (*TriplesBlock) pattern() {}
func (*GroupOrUnion) pattern() {}
func (*Optional) pattern()     {}
func (*Minus) pattern()        {}
func (*Graph) pattern()        {}
func (*Service) pattern()      {}
func (*Filter) pattern()       {}
func (*Bind) pattern()         {}
func (*InlineData) pattern()   {}

// Position implements Pattern.
func (n *TriplesBlock) Position() Pos { return n.Pos }

// Position implements Pattern.
func (n *GroupOrUnion) Position() Pos { return n.Pos }

// Position implements Pattern.
func (n *Optional) Position() Pos { return n.Pos }

// Position implements Pattern.
func (n *Minus) Position() Pos { return n.Pos }

// Position implements Pattern.
func (n *Graph) Position() Pos { return n.Pos }

// Position implements Pattern.
func (n *Service) Position() Pos { return n.Pos }

// Position implements Pattern.
func (n *Filter) Position() Pos { return n.Pos }

// Position implements Pattern.
func (n *Bind) Position() Pos { return n.Pos }

// Position implements Pattern.
func (n *InlineData) Position() Pos { return n.Pos }

// TriplesSameSubject is rule [75] or [81]: a subject with its property list. The
// subject of a blank node property list or collection may have no properties.
type TriplesSameSubject struct {
	Subject GraphNode
	Props   []*Property
}

// Property is a verb with its objects; in a template the verb is a *Var or an
// *IRI, in a pattern it may be any Path.
type Property struct {
	Pos     Pos
	Verb    Verb
	Objects []GraphNode
}

// Verb is a *Var or a Path. The interface is sealed.
type Verb interface {
	Position() Pos
	verb()
}

// GraphNode is a subject or object (rules [104], [105]): *Var, *IRI, *Literal,
// *BlankNode, *Collection or *BlankNodePropertyList. The interface is sealed.
type GraphNode interface {
	Position() Pos
	graphNode()
}

// Term is a *Var, *IRI, *Literal or *BlankNode, or, in inline data, nil for
// UNDEF. The interface is sealed.
type Term interface {
	GraphNode
	term()
}

// Var is a variable, named without '?' or '$'.
type Var struct {
	Pos  Pos
	Name string
}

// IRIForm is how an IRI was written.
type IRIForm int

// The ways of writing an IRI.
const (
	IRIRef      IRIForm = iota // <...>
	IRIPrefixed                // prefix:local
	IRIKeywordA                // the keyword 'a' for rdf:type
)

// IRI is an IRI, resolved; Prefix and Local keep a prefixed name's parts
// (Local unescaped).
type IRI struct {
	Pos    Pos
	IRI    rdf.IRI
	Form   IRIForm
	Prefix string
	Local  string
}

// LiteralForm is how a literal was written.
type LiteralForm int

// The ways of writing a literal.
const (
	LiteralString  LiteralForm = iota // a quoted string, possibly with @lang or ^^datatype
	LiteralNumber                     // INTEGER, DECIMAL or DOUBLE, possibly signed
	LiteralBoolean                    // true or false
)

// Literal is an RDF literal. For a string, Datatype is nil unless ^^ was
// written. For a number or boolean, Value.Datatype says which.
type Literal struct {
	Pos      Pos
	Form     LiteralForm
	Value    rdf.Literal
	Datatype *IRI
}

// BlankNode is _:label, or [] when Label is empty.
type BlankNode struct {
	Pos   Pos
	Label string
}

// Collection is ( node ... ); with no items it is NIL, that is rdf:nil.
type Collection struct {
	Pos   Pos
	Items []GraphNode
}

// BlankNodePropertyList is [ verb objects ; ... ].
type BlankNodePropertyList struct {
	Pos   Pos
	Props []*Property
}

var (
	_ Term      = (*Var)(nil)
	_ Term      = (*IRI)(nil)
	_ Term      = (*Literal)(nil)
	_ Term      = (*BlankNode)(nil)
	_ GraphNode = (*Collection)(nil)
	_ GraphNode = (*BlankNodePropertyList)(nil)
)

func (*Var) graphNode()                   {}
func (*IRI) graphNode()                   {}
func (*Literal) graphNode()               {}
func (*BlankNode) graphNode()             {}
func (*Collection) graphNode()            {}
func (*BlankNodePropertyList) graphNode() {}
func (*Var) term()                        {}
func (*IRI) term()                        {}
func (*Literal) term()                    {}
func (*BlankNode) term()                  {}

// Position implements GraphNode.
func (n *Var) Position() Pos { return n.Pos }

// Position implements GraphNode.
func (n *IRI) Position() Pos { return n.Pos }

// Position implements GraphNode.
func (n *Literal) Position() Pos { return n.Pos }

// Position implements GraphNode.
func (n *BlankNode) Position() Pos { return n.Pos }

// Position implements GraphNode.
func (n *Collection) Position() Pos { return n.Pos }

// Position implements GraphNode.
func (n *BlankNodePropertyList) Position() Pos { return n.Pos }

// Path is a property path expression (rules [88]-[96]): *IRI, *PathInverse,
// *PathSequence, *PathAlternative, *PathMod or *PathNegated. The interface is
// sealed.
type Path interface {
	Verb
	path()
}

// PathInverse is ^path.
type PathInverse struct {
	Pos  Pos
	Path Path
}

// PathSequence is left / right.
type PathSequence struct {
	Pos         Pos
	Left, Right Path
}

// PathAlternative is left | right.
type PathAlternative struct {
	Pos         Pos
	Left, Right Path
}

// PathMod is path? (Mod '?'), path* ('*') or path+ ('+').
type PathMod struct {
	Pos  Pos
	Path Path
	Mod  byte
}

// PathNegated is !iri or !( iri | ^iri | ... ).
type PathNegated struct {
	Pos   Pos
	Items []*NegatedItem
}

// NegatedItem is one member of a negated property set.
type NegatedItem struct {
	Inverse bool
	IRI     *IRI
}

var (
	_ Verb = (*Var)(nil)
	_ Path = (*IRI)(nil)
	_ Path = (*PathInverse)(nil)
	_ Path = (*PathSequence)(nil)
	_ Path = (*PathAlternative)(nil)
	_ Path = (*PathMod)(nil)
	_ Path = (*PathNegated)(nil)
)

func (*Var) verb()             {}
func (*IRI) verb()             {}
func (*PathInverse) verb()     {}
func (*PathSequence) verb()    {}
func (*PathAlternative) verb() {}
func (*PathMod) verb()         {}
func (*PathNegated) verb()     {}

func (*IRI) path()             {}
func (*PathInverse) path()     {}
func (*PathSequence) path()    {}
func (*PathAlternative) path() {}
func (*PathMod) path()         {}
func (*PathNegated) path()     {}

// Position implements Verb.
func (n *PathInverse) Position() Pos { return n.Pos }

// Position implements Verb.
func (n *PathSequence) Position() Pos { return n.Pos }

// Position implements Verb.
func (n *PathAlternative) Position() Pos { return n.Pos }

// Position implements Verb.
func (n *PathMod) Position() Pos { return n.Pos }

// Position implements Verb.
func (n *PathNegated) Position() Pos { return n.Pos }

// Expr is an expression (rules [110]-[127]): *Var, *IRI, *Literal, *Binary,
// *Unary, *In, *Call, *FuncCall, *Exists or *Aggregate. The interface is sealed.
type Expr interface {
	Position() Pos
	expr()
}

// Binary is left op right with op one of || && = != < > <= >= + - * /.
type Binary struct {
	Pos         Pos
	Op          string
	Left, Right Expr
}

// Unary is op operand with op one of ! + -.
type Unary struct {
	Pos     Pos
	Op      string
	Operand Expr
}

// In is expr IN (list) or, with Not, expr NOT IN (list).
type In struct {
	Pos  Pos
	Not  bool
	Expr Expr
	List []Expr
}

// Call is a built-in function call (rule [121]); Name is the function's name
// in upper case (STR, LANGMATCHES, SAMETERM, ISIRI, ...).
type Call struct {
	Pos  Pos
	Name string
	Args []Expr
}

// FuncCall is a call of a function named by an IRI (rule [70]); Distinct is
// only meaningful for custom aggregates.
type FuncCall struct {
	Pos      Pos
	IRI      *IRI
	Distinct bool
	Args     []Expr
}

// Exists is EXISTS { ... } or NOT EXISTS { ... }.
type Exists struct {
	Pos     Pos
	Not     bool
	Pattern *GroupPattern
}

// Aggregate is rule [127]. Arg is nil for COUNT(*). Separator is set only when
// GROUP_CONCAT gave one.
type Aggregate struct {
	Pos          Pos
	Name         string
	Distinct     bool
	Arg          Expr
	Separator    string
	HasSeparator bool
}

var (
	_ Expr = (*Var)(nil)
	_ Expr = (*IRI)(nil)
	_ Expr = (*Literal)(nil)
	_ Expr = (*Binary)(nil)
	_ Expr = (*Unary)(nil)
	_ Expr = (*In)(nil)
	_ Expr = (*Call)(nil)
	_ Expr = (*FuncCall)(nil)
	_ Expr = (*Exists)(nil)
	_ Expr = (*Aggregate)(nil)
)

func (*Var) expr()       {}
func (*IRI) expr()       {}
func (*Literal) expr()   {}
func (*Binary) expr()    {}
func (*Unary) expr()     {}
func (*In) expr()        {}
func (*Call) expr()      {}
func (*FuncCall) expr()  {}
func (*Exists) expr()    {}
func (*Aggregate) expr() {}

// Position implements Expr.
func (n *Binary) Position() Pos { return n.Pos }

// Position implements Expr.
func (n *Unary) Position() Pos { return n.Pos }

// Position implements Expr.
func (n *In) Position() Pos { return n.Pos }

// Position implements Expr.
func (n *Call) Position() Pos { return n.Pos }

// Position implements Expr.
func (n *FuncCall) Position() Pos { return n.Pos }

// Position implements Expr.
func (n *Exists) Position() Pos { return n.Pos }

// Position implements Expr.
func (n *Aggregate) Position() Pos { return n.Pos }
