"""Routes: GPX in, terrain, climbs, descents and cues out. Knows nothing of vehicles."""
