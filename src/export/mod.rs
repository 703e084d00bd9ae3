//! Export stage: the only stage that writes files. Writes `network.geojson`, `cells.geojson`,
//! `coverage.csv` and `summary.json`, each atomically (temp file, then rename).
