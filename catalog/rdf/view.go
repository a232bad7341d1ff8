package rdf

// View is an RDF term whose text lives in a buffer that its maker owns and
// reuses: the form in which a large answer streams from the executor to the
// result writers without a Term, and a string, for every value. A View is
// valid until its maker reuses the buffer; Term makes a term of its own. The
// zero View (Kind 0) stands for no term: an unbound variable.
type View struct {
	Kind Kind
	// Text is the IRI, the blank node label or the literal's lexical form.
	Text []byte
	// Datatype and Lang are a literal's datatype and language tag.
	Datatype IRI
	Lang     string
}

// AppendView appends the text of t to buf and returns t's View over the
// appended bytes, and the grown buffer. A nil t gives the zero View.
// Views made earlier over buf stay valid: their bytes are not touched.
func AppendView(buf []byte, t Term) (View, []byte) {
	start := len(buf)
	var v View
	switch t := t.(type) {
	case IRI:
		buf = append(buf, t...)
		v.Kind = KindIRI
	case BlankNode:
		buf = append(buf, t...)
		v.Kind = KindBlank
	case Literal:
		buf = append(buf, t.Lexical...)
		v = View{Kind: KindLiteral, Datatype: t.Datatype, Lang: t.Lang}
	default:
		return View{}, buf
	}
	v.Text = buf[start:len(buf):len(buf)]
	return v, buf
}

// AppendViews sets dst[i] to the View of sol[i], appending their text to buf,
// and returns the grown buffer. dst must be as long as sol.
func AppendViews(dst []View, buf []byte, sol []Term) []byte {
	for i, t := range sol {
		dst[i], buf = AppendView(buf, t)
	}
	return buf
}

// Term returns the term v stands for, in memory of its own, or nil for the
// zero View.
func (v View) Term() Term {
	switch v.Kind {
	case KindIRI:
		return IRI(v.Text)
	case KindBlank:
		return BlankNode(v.Text)
	case KindLiteral:
		return Literal{Lexical: string(v.Text), Datatype: v.Datatype, Lang: v.Lang}
	}
	return nil
}
