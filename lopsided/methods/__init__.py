"""What is compared: resamplers, learners, preprocessing and metrics, each behind a `Registry`."""
