"""Site stage: computed results in, the static handbook pages and their charts out."""
