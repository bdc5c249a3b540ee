"""Running a recipe: the step registry and the pipeline."""
