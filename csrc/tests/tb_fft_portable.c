/*
 * tb_fft_portable.c -- test-only second build of the FFT kernel.
 *
 * Compiles ../tb_fft.c once more with TB_NO_DISPATCH (plain C kernels
 * only, whatever the CPU) and every public tb_fft_* name renamed to
 * tbport_fft_*, so that test_fft.c can check the portable kernels and
 * the run-time selected ones (AVX2 on x86-64) in the same run.  Not part
 * of the kernel.
 */
#define TB_NO_DISPATCH 1
#define tb_fft_size_supported tbport_fft_size_supported
#define tb_fft_plan_create tbport_fft_plan_create
#define tb_fft_plan_destroy tbport_fft_plan_destroy
#define tb_fft_plan_size tbport_fft_plan_size
#define tb_fft_plan_precision tbport_fft_plan_precision
#define tb_fft_plan_simd tbport_fft_plan_simd
#define tb_fft_workspace_size tbport_fft_workspace_size
#define tb_fft_execute_f32 tbport_fft_execute_f32
#define tb_fft_execute_f64 tbport_fft_execute_f64
#define tb_fft_core_row_f32 tbport_fft_core_row_f32
#define tb_fft_core_row_f64 tbport_fft_core_row_f64
#define tb_fft_core_lanes_f32 tbport_fft_core_lanes_f32
#define tb_fft_core_lanes_f64 tbport_fft_core_lanes_f64
#define tb_fft_core_lanes_load_f32 tbport_fft_core_lanes_load_f32
#define tb_fft_core_lanes_load_f64 tbport_fft_core_lanes_load_f64
#define tb_fft_core_lanes_store_f32 tbport_fft_core_lanes_store_f32
#define tb_fft_core_lanes_store_f64 tbport_fft_core_lanes_store_f64
#define tb_fft_core_lanes_store_range_f32 tbport_fft_core_lanes_store_range_f32
#define tb_fft_core_lanes_store_range_f64 tbport_fft_core_lanes_store_range_f64
#include "../tb_fft.c"
