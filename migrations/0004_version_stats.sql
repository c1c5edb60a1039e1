-- Facts about a dataset as of one version (orders, order days, customers,
-- months), computed once after an import so that pages and charts read them
-- instead of scanning the orders table on every view. The figures are one
-- small JSON document per version, written and read only by
-- internal/store/stats.go; computed_at is RFC 3339 UTC text.
CREATE TABLE version_stats (
    version_id   INTEGER PRIMARY KEY REFERENCES versions(id) ON DELETE CASCADE,
    stats        TEXT NOT NULL,
    computed_at  TEXT
);
