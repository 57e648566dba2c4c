-- Streetwood schema, version 4: removal studies (issue 6). Never edit a shipped migration: add a new
-- numbered file.

-- The year of the removal: the first projected year (NULL in studies made before version 4: the year
-- of created_at is used).
ALTER TABLE studies ADD COLUMN start_year INTEGER CHECK (start_year IS NULL OR start_year BETWEEN 1800 AND 2300);
-- How each tree came into the study ("street=Foundry Street; line=works.geojson within 15 m"), and its
-- distance from the works line when one was given.
ALTER TABLE study_trees ADD COLUMN selected_by TEXT;
ALTER TABLE study_trees ADD COLUMN line_distance_m REAL CHECK (line_distance_m IS NULL OR line_distance_m >= 0);
