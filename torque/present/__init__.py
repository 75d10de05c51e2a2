"""Presenting results: maps and charts (:mod:`~torque.present.maps`), charts against
time (:mod:`~torque.present.timeplots`), the HTML and Markdown report
(:mod:`~torque.present.report`) and the sentences that say what a fit means
(:mod:`~torque.present.sentences`). Nothing here computes a torque or fits a coefficient:
it receives results (:mod:`torque.results`) and draws or words them.
"""
