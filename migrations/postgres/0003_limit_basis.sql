-- Which limit a formulation's cycle checks use when a crystalline matrix offers a
-- Te-governed alternative: 'amorphous' (default, conservative) or 'crystalline'.
ALTER TABLE formulations ADD COLUMN limit_basis TEXT NOT NULL DEFAULT 'amorphous';
