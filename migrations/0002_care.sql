-- Streetwood schema, version 2: care (issue 5). Never edit a shipped migration: add a new numbered file.

-- Mitigation options of an assessment, each with the risk rating expected once it is done (ISA Tree
-- Risk Assessment BMP: the assessor lists options and the residual risk of each).
CREATE TABLE mitigation_options (
    id              INTEGER PRIMARY KEY,
    assessment_id   INTEGER NOT NULL REFERENCES assessments (id),
    position        INTEGER NOT NULL CHECK (position >= 1),
    task            TEXT NOT NULL CHECK (task IN ('prune', 'remove', 'plant', 'stake', 'water', 'inspect', 'stump', 'other')),
    description     TEXT,
    residual_rating TEXT NOT NULL CHECK (residual_rating IN ('low', 'moderate', 'high', 'extreme')),
    UNIQUE (assessment_id, position)
);

-- The date a crew is booked for (status 'scheduled'); due_on stays the deadline.
ALTER TABLE work_orders ADD COLUMN scheduled_on TEXT CHECK (scheduled_on IS NULL OR date(scheduled_on) = scheduled_on);
-- The maintenance cycle (METHODS.md M10) that generated the order; NULL for orders entered by hand.
ALTER TABLE work_orders ADD COLUMN cycle TEXT CHECK (cycle IS NULL OR cycle IN ('routine_prune', 'young_training', 'stake_removal'));

-- A cycle never generates the same occurrence twice (`care cycle` is idempotent).
CREATE UNIQUE INDEX work_orders_cycle_once ON work_orders (tree_id, cycle, due_on) WHERE cycle IS NOT NULL;
CREATE INDEX work_orders_assessment ON work_orders (assessment_id);
