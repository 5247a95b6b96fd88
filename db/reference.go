package db

// ReferenceTables are the tables that hold the same data for every site, so
// their keys need not hold site: when the database is distributed by site
// they become reference tables, copied whole to every node. api_users: a
// token is looked up before its site is known (tokens are unique across
// sites). rule_sets: the built-in rule sets live at the empty site and serve every
// site, so a site's qualified ranges refer to rows of another site.
// schema_migrations: golang-migrate's own bookkeeping. Every other table's
// keys lead with or hold site (TestKeysHoldSite reads the catalog).
var ReferenceTables = []string{"api_users", "rule_sets", "schema_migrations"}
