/* fft_lock.h: the library's one lock around FFTW's planner (not a public
 * header). FFTW allows fftwf_execute from any thread, but planning,
 * destroying plans, wisdom and fftwf_plan_with_nthreads() (a process-wide
 * setting the library changes before some plans) must not run in two
 * threads at once; every such call in the library holds this lock, so
 * objects may be created and destroyed from several threads. Recursive:
 * a planning call may call another (kw_nufft_create -> kw_fft_setup). */
#ifndef KW_FFT_LOCK_H
#define KW_FFT_LOCK_H

void kw_fft_planner_lock(void);
void kw_fft_planner_unlock(void);

/* kw_fft_rigor(): the FFTW planner flag for a caller asking for measured
 * plans (nonzero) or not: FFTW_ESTIMATE always in reproducible mode
 * (kw_fft_set_reproducible()). */
unsigned kw_fft_rigor(int measure);

#endif
