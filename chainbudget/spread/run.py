# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
