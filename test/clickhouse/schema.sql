-- The test server's tables (server.sh runs this after every start; each statement is idempotent
-- and ends with a semicolon at the end of its line; lines starting with two dashes are skipped).
--
-- The roastery's sensor log, one row a minute of a roast, split over two shards: sw_shard1 and
-- sw_shard2 each hold a local MergeTree table; shrinkwise.roast_log is a Distributed table over
-- the cluster shrinkwise_two_shards (config.xml), whose shards open in those two databases, so an
-- empty database name in the Distributed engine reaches each shard's own table.
-- roast_bench is the same shape, for the 1,000,000-row benchmark.
--
-- Columns (test/clickhouse/roastLog.ts generates the rows):
--   reading_id     a key near 1e12 (the hash fold rule's integer key)
--   minute         minutes since 1970-01-01 (about 2.9e7: a large offset)
--   batch_id       the roast batch
--   drum_temp      drum temperature, °C
--   bean_moisture  moisture of the green beans, % (blank now and then: a missing reading)
--   airflow        fan airflow, m³/h
--   ambient_humidity  %, room humidity
--   roast_level    light, medium or dark (text: indicator terms)
--   lot_weight     kg of beans in the drum (a weights column)
--   fold_label     1..5 (a fold-label column)
--   roast_loss     % weight lost in the roast (the target)
CREATE DATABASE IF NOT EXISTS sw_shard1;
CREATE DATABASE IF NOT EXISTS sw_shard2;
CREATE DATABASE IF NOT EXISTS shrinkwise;
CREATE TABLE IF NOT EXISTS sw_shard1.roast_log (reading_id UInt64, minute UInt32, batch_id UInt32, drum_temp Float64, bean_moisture Nullable(Float64), airflow Float64, ambient_humidity Float64, roast_level String, lot_weight Float64, fold_label UInt8, roast_loss Float64) ENGINE = MergeTree() ORDER BY reading_id;
CREATE TABLE IF NOT EXISTS sw_shard2.roast_log AS sw_shard1.roast_log;
CREATE TABLE IF NOT EXISTS shrinkwise.roast_log AS sw_shard1.roast_log ENGINE = Distributed(shrinkwise_two_shards, '', roast_log);
CREATE TABLE IF NOT EXISTS sw_shard1.roast_bench AS sw_shard1.roast_log;
CREATE TABLE IF NOT EXISTS sw_shard2.roast_bench AS sw_shard1.roast_log;
CREATE TABLE IF NOT EXISTS shrinkwise.roast_bench AS sw_shard1.roast_log ENGINE = Distributed(shrinkwise_two_shards, '', roast_bench);
