"""A sampled input run through the stage: waveforms, recordings, edges, noise, width trade-off."""
