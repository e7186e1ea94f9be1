"""The engine: the rule pack, policy, waivers, baseline and ordering. It never imports a reporter."""
