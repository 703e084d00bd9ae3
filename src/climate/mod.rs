//! Climate stage: climate velocity, trajectories and refugia per scenario (see issue 3).
