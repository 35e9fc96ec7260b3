"""Prior families and the parsing of a study's [parameters] table."""
