//! YAML rules files and the expression language of DESIGN §7: parsing with source
//! spans, dimension type-checking at load, evaluation against a part's figures.
