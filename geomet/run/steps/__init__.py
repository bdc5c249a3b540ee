"""Run steps: one module per stage, each registering its steps with
:func:`geomet.run.registry.register_step`. Every module here is imported by
:func:`geomet.run.registry.load_steps`."""
