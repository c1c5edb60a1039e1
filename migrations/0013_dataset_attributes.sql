-- The attribute columns a dataset's customers files brought, so pages and
-- lists need not scan every customer's JSON for their names. Written when a
-- version becomes ready; filled here once from the customers already
-- stored.
CREATE TABLE dataset_attributes (
    dataset_id  INTEGER NOT NULL REFERENCES datasets(id) ON DELETE CASCADE,
    name        TEXT NOT NULL,
    PRIMARY KEY (dataset_id, name)
) WITHOUT ROWID;

INSERT INTO dataset_attributes (dataset_id, name)
    SELECT DISTINCT c.dataset_id, j.key FROM customers c, json_each(c.attributes) j WHERE c.attributes IS NOT NULL;
