"""The desktop window (Qt only): it displays project state and dispatches acts; the core
computes.

Where things are:

    app.py        composition: builds every feature, docks it, adds its actions, connects
                  features by signals; launch.run_app() and the tests compose in the same
                  order
    window.py     the frame: set_central, add_dock, add_action(menu key, action), toolbars,
                  status, problems, closing (cancel, join, close the engine)
    jobs.py       the one background-job mechanism: results on the GUI thread, cancel, the
                  model lane (one model user at a time, others wait visibly), and
                  project_changed(Changes) after every operation that returns Done
    actions.py    the one action builder;  tables.py  the table-model base;
    paths.py      the save-path helper
    engine/       the engine bar (the graded engine: bundled model, GGUF file or endpoint,
                  and the project's settings: temperature, max tokens, answer mode), the
                  endpoint dialog, remembered engines, EngineHandle
    snapshot.py   `honebench gui --snapshot`;  tour.py  help and the guided tour
    project/      operations.py (EVERY user act, no Qt, each one core.Project call: grade,
                  confirm, compare, suggest, hone, keep, set_aside, restore, set_note,
                  import_set, set_check, set_settings, save_draft, export_*), session.py
                  (the open project, draft and settings saving), state.py (what the window
                  shows, read through Project), import_flow.py, mapping_dialog.py,
                  exports.py, files.py
    grading/      editor, prompt preview, grade sheet (model, panel, summary), grade control,
                  item view
    shelf/        the one shelf model every view reads, the shelf panel, its control
    suggest/      suggestions panel, cards, outcome area
    hone/         auto-hone panel and its chart
    compare/      compare and confirm control, compare view, progress chart

Rules: a widget takes what it needs in its constructor; it learns of changes from
``JobRunner.project_changed`` and ``ProjectSession.opened``; it never reaches into another
widget; every act goes through ``project/operations.py`` in a job; nothing here reads
``Project.store``.
"""
