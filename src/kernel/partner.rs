//! More worker processes calling the same kernel, so that a slow kernel's batches run on
//! several cores at once.
//!
//! A partner is a thread owning a second [`Runner`] (its own worker process, its own pace and
//! deadlines); it takes the calls queued for it one after the other and answers each in turn,
//! so its worker starts the next as soon as one returns.  After a call fails it runs no more:
//! the later calls are answered as failed, for the main runner to make.  Separate processes rather than
//! threads in one worker: a kernel need not be thread-safe, and a crash still kills only the
//! process that ran the inputs.  Partners only ever run plain calls of a healthy kernel: the
//! first failure of a partner's call sends its inputs back to the main runner, which splits
//! them down to the failing input as it does alone (`bisect.rs`), and ends every partner for
//! the rest of the run, so fault budgets, pinned inputs and `--stop-on-crash` keep the meaning
//! they have with one worker.

use super::runner::{CallError, Runner, RunnerOptions};
use super::KernelSpec;
use std::sync::mpsc::{channel, Receiver, Sender};
use std::thread::JoinHandle;

/// One call for a partner: first arguments, second arguments, and a buffer for the outputs
/// (an earlier answer's, so that its memory is reused).
type Request = (Vec<u32>, Option<Vec<u32>>, Vec<u32>);
/// A partner's answer: the outputs or why the call failed, and the first call after which the
/// FP control word changed (as [`Runner`] records it).
type Answer = (Result<Vec<u32>, CallError>, Option<(usize, u32, u32)>);
/// An answer as the thread sends it, with the request's first arguments (their buffer, for
/// the next request).
type Sent = (
    Result<Vec<u32>, CallError>,
    Option<(usize, u32, u32)>,
    Vec<u32>,
);

/// A second worker process with the thread that talks to it.
pub(super) struct Partner {
    requests: Option<Sender<Request>>,
    answers: Receiver<Sent>,
    thread: Option<JoinHandle<()>>,
    /// Buffers of earlier calls, reused by the next: first arguments, outputs.
    spare: (Vec<Vec<u32>>, Vec<Vec<u32>>),
}

impl Partner {
    /// Starts the thread; its runner (and worker) starts with the first call, so a partner
    /// that cannot start fails that call and nothing else.
    pub(super) fn start(spec: &KernelSpec, options: &RunnerOptions) -> Partner {
        let (requests, incoming) = channel::<Request>();
        let (outgoing, answers) = channel::<Sent>();
        let spec = spec.clone();
        let options = RunnerOptions {
            workers: 1,
            ..options.clone()
        };
        let thread = std::thread::spawn(move || {
            let mut runner: Option<Runner> = None;
            let mut failed = false;
            for (first, second, mut out) in incoming {
                let called = match &mut runner {
                    _ if failed => Err(CallError::Worker("an earlier call failed".into())),
                    Some(r) => r.call_plain_into(&first, second.as_deref(), &mut out),
                    None => match Runner::start(&spec, options.clone()) {
                        Ok(r) => {
                            runner
                                .insert(r)
                                .call_plain_into(&first, second.as_deref(), &mut out)
                        }
                        Err(m) => Err(CallError::Worker(m)),
                    },
                };
                failed |= called.is_err();
                let change = runner.as_ref().and_then(|r| r.call_env_change);
                if outgoing
                    .send((called.map(|()| out), change, first))
                    .is_err()
                {
                    break;
                }
            }
        });
        Partner {
            requests: Some(requests),
            answers,
            thread: Some(thread),
            spare: (Vec::new(), Vec::new()),
        }
    }

    /// Sends one call; [`Partner::receive`] gives its answer.
    pub(super) fn send(&mut self, first: &[u32], second: Option<&[u32]>) -> bool {
        let mut firsts = self.spare.0.pop().unwrap_or_default();
        firsts.clear();
        firsts.extend_from_slice(first);
        let request = (
            firsts,
            second.map(<[u32]>::to_vec),
            self.spare.1.pop().unwrap_or_default(),
        );
        self.requests
            .as_ref()
            .is_some_and(|r| r.send(request).is_ok())
    }

    /// The answer to the oldest call not yet answered: the outputs or why the call failed, and the first
    /// call after which the FP control word changed.
    pub(super) fn receive(&mut self) -> Answer {
        match self.answers.recv() {
            Ok((result, change, firsts)) => {
                self.spare.0.push(firsts);
                (result, change)
            }
            Err(_) => (
                Err(CallError::Worker("the partner thread ended".into())),
                None,
            ),
        }
    }

    /// Gives back the outputs of an answer once they are copied, for the next call to fill.
    pub(super) fn recycle(&mut self, outputs: Vec<u32>) {
        self.spare.1.push(outputs);
    }
}

impl Drop for Partner {
    fn drop(&mut self) {
        // Closing the channel ends the thread's loop; its runner then ends its worker.
        self.requests.take();
        if let Some(t) = self.thread.take() {
            let _ = t.join();
        }
    }
}
