package r2rml

import (
	"sort"
	"strings"

	"veneer/catalog/rdf"
)

// NS is the namespace of the R2RML vocabulary (R2RML §3).
const NS = "http://www.w3.org/ns/r2rml#"

// The R2RML vocabulary terms the loader reads (R2RML, Appendix: vocabulary).
const (
	rrTriplesMap         rdf.IRI = NS + "TriplesMap"
	rrLogicalTable       rdf.IRI = NS + "logicalTable"
	rrTableName          rdf.IRI = NS + "tableName"
	rrSQLQuery           rdf.IRI = NS + "sqlQuery"
	rrSQLVersion         rdf.IRI = NS + "sqlVersion"
	rrSubjectMap         rdf.IRI = NS + "subjectMap"
	rrSubject            rdf.IRI = NS + "subject"
	rrPredicateObjectMap rdf.IRI = NS + "predicateObjectMap"
	rrPredicateMap       rdf.IRI = NS + "predicateMap"
	rrPredicate          rdf.IRI = NS + "predicate"
	rrObjectMap          rdf.IRI = NS + "objectMap"
	rrObject             rdf.IRI = NS + "object"
	rrGraphMap           rdf.IRI = NS + "graphMap"
	rrGraph              rdf.IRI = NS + "graph"
	rrClass              rdf.IRI = NS + "class"
	rrConstant           rdf.IRI = NS + "constant"
	rrColumn             rdf.IRI = NS + "column"
	rrTemplate           rdf.IRI = NS + "template"
	rrTermType           rdf.IRI = NS + "termType"
	rrLanguage           rdf.IRI = NS + "language"
	rrDatatype           rdf.IRI = NS + "datatype"
	rrInverseExpression  rdf.IRI = NS + "inverseExpression"
	rrParentTriplesMap   rdf.IRI = NS + "parentTriplesMap"
	rrJoinCondition      rdf.IRI = NS + "joinCondition"
	rrChild              rdf.IRI = NS + "child"
	rrParent             rdf.IRI = NS + "parent"

	rrIRI       rdf.IRI = NS + "IRI"
	rrBlankNode rdf.IRI = NS + "BlankNode"
	rrLiteral   rdf.IRI = NS + "Literal"
	rrSQL2008   rdf.IRI = NS + "SQL2008"
)

// role is the part a resource of the mapping graph plays; it decides which
// R2RML properties and classes the resource may have.
type role int

const (
	roleTriplesMap role = iota
	roleLogicalTable
	roleSubjectMap
	rolePredicateObjectMap
	rolePredicateMap
	roleObjectMap
	roleRefObjectMap
	roleGraphMap
	roleJoin
)

// describe names the role in messages.
func (r role) describe() string {
	return [...]string{
		"triples map", "logical table", "subject map", "predicate-object map",
		"predicate map", "object map", "referencing object map", "graph map", "join condition",
	}[r]
}

// article names the role with its indefinite article.
func (r role) article() string {
	if r == roleObjectMap {
		return "an " + r.describe()
	}
	return "a " + r.describe()
}

// termMapProps are the properties every term map may have (R2RML §7).
var termMapProps = []rdf.IRI{rrConstant, rrColumn, rrTemplate, rrTermType, rrInverseExpression}

// roleProps lists the R2RML properties allowed on a resource of each role.
var roleProps = map[role][]rdf.IRI{
	roleTriplesMap:         {rrLogicalTable, rrSubjectMap, rrSubject, rrPredicateObjectMap},
	roleLogicalTable:       {rrTableName, rrSQLQuery, rrSQLVersion},
	roleSubjectMap:         append([]rdf.IRI{rrClass, rrGraphMap, rrGraph}, termMapProps...),
	rolePredicateObjectMap: {rrPredicateMap, rrPredicate, rrObjectMap, rrObject, rrGraphMap, rrGraph},
	rolePredicateMap:       termMapProps,
	roleObjectMap:          append([]rdf.IRI{rrLanguage, rrDatatype}, termMapProps...),
	roleRefObjectMap:       {rrParentTriplesMap, rrJoinCondition},
	roleGraphMap:           termMapProps,
	roleJoin:               {rrChild, rrParent},
}

// roleClasses lists the R2RML classes a resource of each role may be typed with.
var roleClasses = map[role][]rdf.IRI{
	roleTriplesMap:         {rrTriplesMap},
	roleLogicalTable:       {NS + "LogicalTable", NS + "BaseTableOrView", NS + "R2RMLView"},
	roleSubjectMap:         {NS + "SubjectMap", NS + "TermMap"},
	rolePredicateObjectMap: {NS + "PredicateObjectMap"},
	rolePredicateMap:       {NS + "PredicateMap", NS + "TermMap"},
	roleObjectMap:          {NS + "ObjectMap", NS + "TermMap"},
	roleRefObjectMap:       {NS + "RefObjectMap", NS + "ObjectMap"},
	roleGraphMap:           {NS + "GraphMap", NS + "TermMap"},
	roleJoin:               {NS + "Join"},
}

// homeRole says where each property belongs, for "rr:class belongs on a subject
// map" hints; every property of the vocabulary is in it.
var homeRole = func() map[rdf.IRI]role {
	m := map[rdf.IRI]role{}
	for _, r := range []role{roleTriplesMap, roleLogicalTable, rolePredicateObjectMap, roleSubjectMap, roleObjectMap, roleRefObjectMap, roleJoin} {
		for _, p := range roleProps[r] {
			if _, ok := m[p]; !ok {
				m[p] = r
			}
		}
	}
	return m
}()

// knownClasses are the classes of the vocabulary.
var knownClasses = func() map[rdf.IRI]bool {
	m := map[rdf.IRI]bool{}
	for _, cs := range roleClasses {
		for _, c := range cs {
			m[c] = true
		}
	}
	return m
}()

// sqlVersions are the rr: SQL version identifiers a mapping may name: rr:SQL2008
// (R2RML §5.2) and the further ones the R2RML working group listed on its wiki
// (written down from memory). IRIs outside the rr: namespace are accepted as
// they are.
var sqlVersions = map[rdf.IRI]bool{
	rrSQL2008: true, NS + "Oracle": true, NS + "MySQL": true, NS + "MSSQLServer": true,
	NS + "HSQLDB": true, NS + "PostgreSQL": true, NS + "DB2": true, NS + "Informix": true,
	NS + "Ingres": true, NS + "Progress": true, NS + "SybaseASE": true,
	NS + "SybaseSQLAnywhere": true, NS + "Virtuoso": true, NS + "Firebird": true,
}

// short writes an IRI of the R2RML namespace as rr:name, any other in brackets.
func short(i rdf.IRI) string {
	if local, ok := strings.CutPrefix(string(i), NS); ok {
		return "rr:" + local
	}
	return i.String()
}

// suggest returns a hint naming the vocabulary property that differs from the
// unknown one only in letter case, if there is one.
func suggest(unknown rdf.IRI) string {
	var names []string
	for p := range homeRole {
		if strings.EqualFold(string(p), string(unknown)) {
			names = append(names, short(p))
		}
	}
	sort.Strings(names)
	if len(names) == 0 {
		return ""
	}
	return " (did you mean " + strings.Join(names, " or ") + "?)"
}
