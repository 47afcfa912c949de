"""Design studies (sweeps, goal seeking, sensitivities, tolerances): the next stage to be built.
They call the front door (femodes.api) many times and sit beside the report, above the quantities."""
