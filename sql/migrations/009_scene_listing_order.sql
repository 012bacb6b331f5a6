-- The scene listing (sql/queries/scene_listing.sql) pages in the order
-- coalesce(acquired_at, 'infinity'), id: scenes without an acquisition time come
-- last. The index of 006 (scenes_acquired_id, on acquired_at and id) cannot serve
-- that expression, so a page was a scan of every scene and a sort; this index
-- serves the listing's keyset condition and order as they are written. What the
-- listing returns is unchanged (test/integration/store-summaries.test.ts pages
-- through it with and without this index).

DROP INDEX scenes_acquired_id;
CREATE INDEX scenes_listing_order ON scenes ((coalesce(acquired_at, 'infinity'::timestamptz)), id);
