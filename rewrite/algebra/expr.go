package algebra

// Expr is a SPARQL expression (§17): Var, Const, Call, Exists or Aggregate.
type Expr interface{ expr() }

// Call applies an operator or function to arguments. Op is one of the operator
// symbols "||", "&&", "=", "!=", "<", ">", "<=", ">=", "+", "-", "*", "/", "!",
// "u-" and "u+" (unary minus and plus), "IN" and "NOT IN" (first argument is the
// tested value), the upper-case name of a built-in function as the grammar spells
// it ("STR", "REGEX", "COALESCE", "SAMETERM", "ISBLANK", ...; Translate writes the
// synonyms URI and ISURI as "IRI" and "ISIRI"), or, when IRI is set, a cast or
// extension function named by that IRI (Op is then empty).
type Call struct {
	Op   string
	IRI  string
	Args []Expr
}

// Exists is EXISTS (Not false) or NOT EXISTS (Not true) over a graph pattern.
type Exists struct {
	Not     bool
	Pattern Node
}

// Aggregate is an aggregate call (§18.5). Name is COUNT, SUM, MIN, MAX, AVG, SAMPLE
// or GROUP_CONCAT; Arg is nil for COUNT(*). Separator applies to GROUP_CONCAT and
// defaults to a single space.
type Aggregate struct {
	Name      string
	Distinct  bool
	Arg       Expr
	Separator string
}

var (
	_ Expr = Var("")
	_ Expr = Const{}
	_ Expr = Call{}
	_ Expr = Exists{}
	_ Expr = Aggregate{}
)

func (Var) expr()       {}
func (Const) expr()     {}
func (Call) expr()      {}
func (Exists) expr()    {}
func (Aggregate) expr() {}
