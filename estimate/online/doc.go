// Package online measures the tracking error while the loop runs: from each
// decoded sample's error e_k it keeps E[eᵀe] and the error's mean over the
// whole run and over sliding windows, with a confidence interval that is
// valid for correlated samples (log-scale batch means) and says when the
// batches are too short to trust; and it classifies each sample's sequence
// number (next, late, duplicate, restart) so that lost and reordered
// datagrams are counted.
//
// Place in the flow: relay tap → datagram decoder → online (here) →
// verdict against the prediction (estimate/engine). Nothing here allocates
// per sample.
package online
