-- Streetwood inventory schema, version 1. SI units throughout (DBH cm, lengths m).
-- Never edit a shipped migration: add a new numbered file instead.

CREATE TABLE species (
    id               INTEGER PRIMARY KEY,
    scientific_name  TEXT NOT NULL UNIQUE COLLATE NOCASE CHECK (length(trim(scientific_name)) > 0),
    common_name      TEXT NOT NULL DEFAULT '',
    genus            TEXT NOT NULL CHECK (length(genus) > 0),
    family           TEXT NOT NULL,
    leaf_habit       TEXT NOT NULL CHECK (leaf_habit IN ('deciduous', 'evergreen')),
    sg_green         REAL NOT NULL CHECK (sg_green > 0 AND sg_green < 1.5),
    jenkins_group    TEXT NOT NULL,
    chojnacky_group  TEXT NOT NULL,
    growth_cm_per_yr REAL NOT NULL CHECK (growth_cm_per_yr >= 0 AND growth_cm_per_yr <= 5),
    growth_source    TEXT NOT NULL DEFAULT '',
    water_use        TEXT NOT NULL CHECK (water_use IN ('low', 'moderate', 'high')),
    lai              REAL NOT NULL CHECK (lai > 0 AND lai <= 15),
    max_height_m     REAL CHECK (max_height_m IS NULL OR (max_height_m > 0 AND max_height_m <= 130)),
    builtin          INTEGER NOT NULL DEFAULT 0 CHECK (builtin IN (0, 1)),
    source           TEXT NOT NULL DEFAULT ''
);
CREATE INDEX species_common_name ON species (common_name COLLATE NOCASE);

CREATE TABLE zones (
    id            INTEGER PRIMARY KEY,
    name          TEXT NOT NULL UNIQUE CHECK (length(trim(name)) > 0),
    geometry_json TEXT NOT NULL CHECK (json_valid(geometry_json))
);

CREATE TABLE trees (
    id           INTEGER PRIMARY KEY,
    uid          TEXT NOT NULL UNIQUE CHECK (length(uid) > 0),
    species_id   INTEGER NOT NULL REFERENCES species (id),
    lon          REAL CHECK (lon IS NULL OR (lon >= -180 AND lon <= 180)),
    lat          REAL CHECK (lat IS NULL OR (lat >= -90 AND lat <= 90)),
    street       TEXT,
    house_number TEXT,
    site_kind    TEXT CHECK (site_kind IS NULL OR site_kind IN ('verge', 'pit', 'median', 'park', 'yard')),
    planted_on   TEXT CHECK (planted_on IS NULL OR date(planted_on) = planted_on),
    owner        TEXT,
    status       TEXT NOT NULL DEFAULT 'standing' CHECK (status IN ('standing', 'removed', 'planned')),
    removed_on   TEXT CHECK (removed_on IS NULL OR date(removed_on) = removed_on),
    zone_id      INTEGER REFERENCES zones (id),
    notes        TEXT,
    created_at   TEXT NOT NULL,
    updated_at   TEXT NOT NULL,
    CHECK ((lon IS NULL) = (lat IS NULL))
);
CREATE INDEX trees_species ON trees (species_id);
CREATE INDEX trees_street ON trees (street);
CREATE INDEX trees_zone ON trees (zone_id);

CREATE TABLE measurements (
    id             INTEGER PRIMARY KEY,
    tree_id        INTEGER NOT NULL REFERENCES trees (id),
    measured_on    TEXT NOT NULL CHECK (date(measured_on) = measured_on),
    -- Each stem's DBH in cm, as entered: "22;18;9". dbh_cm is the equivalent DBH sqrt(sum d^2).
    stems_cm       TEXT,
    dbh_cm         REAL NOT NULL CHECK (dbh_cm > 0 AND dbh_cm <= 1000),
    height_m       REAL CHECK (height_m IS NULL OR (height_m > 0 AND height_m <= 130)),
    crown_base_m   REAL CHECK (crown_base_m IS NULL OR crown_base_m >= 0),
    crown_width_m  REAL CHECK (crown_width_m IS NULL OR (crown_width_m >= 0 AND crown_width_m <= 80)),
    crown_width2_m REAL CHECK (crown_width2_m IS NULL OR (crown_width2_m >= 0 AND crown_width2_m <= 80)),
    dieback_pct    REAL CHECK (dieback_pct IS NULL OR (dieback_pct >= 0 AND dieback_pct <= 100)),
    condition      TEXT CHECK (condition IS NULL OR condition IN ('good', 'fair', 'poor', 'dead')),
    measured_by    TEXT,
    created_at     TEXT NOT NULL
);
CREATE INDEX measurements_tree ON measurements (tree_id, measured_on);

CREATE TABLE assessments (
    id          INTEGER PRIMARY KEY,
    tree_id     INTEGER NOT NULL REFERENCES trees (id),
    assessed_on TEXT NOT NULL CHECK (date(assessed_on) = assessed_on),
    assessor    TEXT,
    level       INTEGER NOT NULL CHECK (level IN (1, 2, 3)),
    time_frame_years REAL CHECK (time_frame_years IS NULL OR time_frame_years > 0),
    -- Overall rating: the highest rating over the failure modes (derived by care rules).
    rating      TEXT NOT NULL CHECK (rating IN ('low', 'moderate', 'high', 'extreme')),
    next_due_on TEXT CHECK (next_due_on IS NULL OR date(next_due_on) = next_due_on),
    notes       TEXT,
    created_at  TEXT NOT NULL
);
CREATE INDEX assessments_tree ON assessments (tree_id, assessed_on);

CREATE TABLE failure_modes (
    id                    INTEGER PRIMARY KEY,
    assessment_id         INTEGER NOT NULL REFERENCES assessments (id),
    part                  TEXT NOT NULL CHECK (part IN ('trunk', 'branch', 'roots', 'crown', 'whole_tree')),
    part_size_cm          REAL CHECK (part_size_cm IS NULL OR (part_size_cm > 0 AND part_size_cm <= 1000)),
    target                TEXT,
    occupancy             TEXT NOT NULL CHECK (occupancy IN ('rare', 'occasional', 'frequent', 'constant')),
    likelihood_of_failure TEXT NOT NULL CHECK (likelihood_of_failure IN ('improbable', 'possible', 'probable', 'imminent')),
    likelihood_of_impact  TEXT NOT NULL CHECK (likelihood_of_impact IN ('very_low', 'low', 'medium', 'high')),
    consequences          TEXT NOT NULL CHECK (consequences IN ('negligible', 'minor', 'significant', 'severe')),
    rating                TEXT NOT NULL CHECK (rating IN ('low', 'moderate', 'high', 'extreme')),
    mitigation            TEXT,
    residual_rating       TEXT CHECK (residual_rating IS NULL OR residual_rating IN ('low', 'moderate', 'high', 'extreme'))
);
CREATE INDEX failure_modes_assessment ON failure_modes (assessment_id);

CREATE TABLE work_orders (
    id             INTEGER PRIMARY KEY,
    tree_id        INTEGER NOT NULL REFERENCES trees (id),
    task           TEXT NOT NULL CHECK (task IN ('prune', 'remove', 'plant', 'stake', 'water', 'inspect', 'stump', 'other')),
    priority       INTEGER NOT NULL CHECK (priority BETWEEN 1 AND 4),
    status         TEXT NOT NULL DEFAULT 'open' CHECK (status IN ('open', 'scheduled', 'done', 'cancelled')),
    due_on         TEXT CHECK (due_on IS NULL OR date(due_on) = due_on),
    done_on        TEXT CHECK (done_on IS NULL OR date(done_on) = done_on),
    crew           TEXT,
    estimated_cost REAL CHECK (estimated_cost IS NULL OR estimated_cost >= 0),
    actual_cost    REAL CHECK (actual_cost IS NULL OR actual_cost >= 0),
    notes          TEXT,
    assessment_id  INTEGER REFERENCES assessments (id),
    created_at     TEXT NOT NULL,
    updated_at     TEXT NOT NULL,
    CHECK (status <> 'done' OR done_on IS NOT NULL)
);
CREATE INDEX work_orders_tree ON work_orders (tree_id);
CREATE INDEX work_orders_queue ON work_orders (status, priority, due_on);

CREATE TABLE weather_stations (
    id          INTEGER PRIMARY KEY,
    name        TEXT NOT NULL UNIQUE CHECK (length(trim(name)) > 0),
    lat         REAL NOT NULL CHECK (lat >= -90 AND lat <= 90),
    lon         REAL CHECK (lon IS NULL OR (lon >= -180 AND lon <= 180)),
    elevation_m REAL NOT NULL CHECK (elevation_m >= -500 AND elevation_m <= 9000),
    coastal     INTEGER NOT NULL DEFAULT 0 CHECK (coastal IN (0, 1))
);

CREATE TABLE weather_days (
    id           INTEGER PRIMARY KEY,
    station_id   INTEGER NOT NULL REFERENCES weather_stations (id),
    date         TEXT NOT NULL CHECK (date(date) = date),
    precip_mm    REAL CHECK (precip_mm IS NULL OR (precip_mm >= 0 AND precip_mm <= 2000)),
    tmin_c       REAL CHECK (tmin_c IS NULL OR (tmin_c >= -90 AND tmin_c <= 60)),
    tmax_c       REAL CHECK (tmax_c IS NULL OR (tmax_c >= -90 AND tmax_c <= 60)),
    rh_mean_pct  REAL CHECK (rh_mean_pct IS NULL OR (rh_mean_pct >= 0 AND rh_mean_pct <= 100)),
    wind_2m_ms   REAL CHECK (wind_2m_ms IS NULL OR (wind_2m_ms >= 0 AND wind_2m_ms <= 100)),
    solar_mj_m2  REAL CHECK (solar_mj_m2 IS NULL OR (solar_mj_m2 >= 0 AND solar_mj_m2 <= 50)),
    tdew_c       REAL CHECK (tdew_c IS NULL OR (tdew_c >= -90 AND tdew_c <= 40)),
    sunshine_h   REAL CHECK (sunshine_h IS NULL OR (sunshine_h >= 0 AND sunshine_h <= 24)),
    UNIQUE (station_id, date)
);

CREATE TABLE studies (
    id            INTEGER PRIMARY KEY,
    name          TEXT NOT NULL UNIQUE CHECK (length(trim(name)) > 0),
    description   TEXT,
    horizon_years INTEGER NOT NULL DEFAULT 40 CHECK (horizon_years BETWEEN 1 AND 200),
    seed          INTEGER NOT NULL,
    runs          INTEGER NOT NULL DEFAULT 1000 CHECK (runs BETWEEN 1 AND 1000000),
    weather_year  INTEGER,
    functional_limitation REAL NOT NULL DEFAULT 1.0 CHECK (functional_limitation >= 0 AND functional_limitation <= 1),
    external_limitation   REAL NOT NULL DEFAULT 1.0 CHECK (external_limitation >= 0 AND external_limitation <= 1),
    created_at    TEXT NOT NULL
);

CREATE TABLE study_trees (
    id       INTEGER PRIMARY KEY,
    study_id INTEGER NOT NULL REFERENCES studies (id),
    tree_id  INTEGER NOT NULL REFERENCES trees (id),
    UNIQUE (study_id, tree_id)
);

CREATE TABLE study_plantings (
    id            INTEGER PRIMARY KEY,
    study_id      INTEGER NOT NULL REFERENCES studies (id),
    plan_name     TEXT NOT NULL CHECK (length(trim(plan_name)) > 0),
    species_id    INTEGER NOT NULL REFERENCES species (id),
    count         INTEGER NOT NULL CHECK (count > 0),
    dbh_cm        REAL NOT NULL CHECK (dbh_cm > 0 AND dbh_cm <= 50),
    planting_year INTEGER NOT NULL CHECK (planting_year BETWEEN 1800 AND 2300)
);
CREATE INDEX study_plantings_study ON study_plantings (study_id, plan_name);

CREATE TABLE settings (
    id    INTEGER PRIMARY KEY,
    key   TEXT NOT NULL UNIQUE,
    value TEXT NOT NULL
);

-- Who is writing: the store sets this one row at the start of each write transaction, and the audit
-- triggers below copy it into every audit row.
CREATE TABLE audit_context (
    id    INTEGER PRIMARY KEY CHECK (id = 1),
    actor TEXT NOT NULL
);
INSERT INTO audit_context (id, actor) VALUES (1, 'system');

CREATE TABLE audit_log (
    id          INTEGER PRIMARY KEY,
    at          TEXT NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')),
    table_name  TEXT NOT NULL,
    row_id      INTEGER NOT NULL,
    action      TEXT NOT NULL CHECK (action IN ('insert', 'update', 'delete')),
    before_json TEXT CHECK (before_json IS NULL OR json_valid(before_json)),
    after_json  TEXT CHECK (after_json IS NULL OR json_valid(after_json)),
    actor       TEXT NOT NULL
);
CREATE INDEX audit_log_row ON audit_log (table_name, row_id);
