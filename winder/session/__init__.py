"""Winding sessions: journal, resume, calibration, reports and history (layer 4).

Modules
-------
``journal``      append-only JSON Lines journal (``Journal``, ``replay``, ``Replay``,
                 ``TornLine``, ``CheckpointPolicy``, ``EVENT_KINDS``, ``FORMAT_VERSION``).
``store``        where sessions live (``data_dir``, ``sessions_dir``, ``new_session_dir``,
                 ``resolve_session``, ``list_sessions``, ``write_atomic``,
                 ``write_json_atomic``, ``SessionLock``, ``slugify``).
``state``        ``SessionState`` (folded from events; ``apply(event)``), ``rebuild``,
                 ``effective_state`` (running with no live host = interrupted).
``calibration``  ``to_20c``/``from_20c`` (copper alpha 0.00393 /K), ``ResistanceCurve``,
                 ``Calibrator`` (weighted least squares of measured/predicted), ``Estimate``,
                 ``Reading``.
``session``      ``Session``: ``create(...)``, ``open(ref, writable=)``, ``record(kind, **f)``
                 (journal + state in one step), ``write_summary()``, ``close()``.
``prepare``      ``prepare(coil_path, machine)`` (load, plan, schedule, frozen coil YAML,
                 resistance curve), ``machine_for(file, caps, cpr)``, ``started_fields``,
                 ``load_frozen``.
``runner``       ``Runner`` (below), ``Update``, ``Reconciliation``, ``make_segments``.
``report``       ``build_report(session)`` (the dict of ``winder report --json`` and
                 ``summary.json``), ``readings_csv``, ``format_text``.
``history``      ``collect(filters)``, ``Filters``, ``matched_pairs(reports, tol_percent)``.
``bench``        ``python -m winder.session.bench``: replay and checkpoint figures.

Driving a session from a front end (the terminal UI does what the headless loop in
``winder/cli/session_cmd.py`` does)::

    events = queue.Queue()
    link = WinderLink(port, events=events); link.open()
    machine = machine_for(machine_file, link.info.capabilities, link.info.counts_per_rev)
    prep = prepare(coil_path, machine)
    sess = Session.create(coil_name=prep.coil.name, coil_yaml=prep.coil_yaml,
                          plan=prep.plan.to_dict(), schedule=prep.schedule.to_dict(),
                          started=started_fields(prep, link.info.to_dict()))
    runner = Runner(sess, link, schedule=prep.schedule, machine=machine, events=events,
                    on_update=callback)          # callback(Update) on the runner thread
    runner.start()                               # or runner.resume(reading, accept_correction)
    while runner.poll(0.1): ...                  # one thread: the runner thread
    # from any thread: runner.pause(), .cont(), .reading(ohm, temp_c, note), .note(text),
    # .wire_break(note), .splice(note), .accept_stop(turns=None), .correct_count(turns),
    # .stop(reason), .abort(reason); runner.halt(reason) from the runner thread stops the
    # motor and journals a pause at once (signals, quitting).
    # read-only: runner.progress() (turns, stop_turns, rpm, pass_index, passes, guide_mm,
    # eta_s, predicted_ohm, state), runner.state (SessionState), runner.motor, runner.done
    link.close(); sess.close()
"""
