//! Minimal firmware: load a model from flash, step the estimator in f32 on volatile inputs. With
//! feature `bench-model` the model is the runtime's benchmark model (for instruction counts).
#![no_std]
#![no_main]

use core::ptr::{addr_of, addr_of_mut};

use cortex_m_rt::entry;
use regimix_runtime::{state_words_for, Estimator, ModelView};

#[cfg(not(feature = "bench-model"))]
static MODEL: &[u8] = include_bytes!("../../../docs/examples/tiny-model.rgmx");
#[cfg(not(feature = "bench-model"))]
static mut INPUT: [f32; 1] = [95.0];
#[cfg(not(feature = "bench-model"))]
static mut STATE: [f32; 64] = [0.0; 64];

#[cfg(feature = "bench-model")]
static MODEL: &[u8] = include_bytes!(concat!(env!("OUT_DIR"), "/bench-model.rgmx"));
#[cfg(feature = "bench-model")]
static mut INPUT: [f32; 6] = [95.0, 101.0, 99.0, 103.0, 97.0, 100.0];
#[cfg(feature = "bench-model")]
static mut STATE: [f32; 1024] = [0.0; 1024];

static mut OUTPUT: f32 = 0.0;

#[entry]
fn main() -> ! {
    // Opaque to the compiler, as a model loaded from a flash partition is: otherwise it could
    // fold the model's dimensions into the code and keep only the kernels this one uses.
    let Ok(model) = ModelView::parse(core::hint::black_box(MODEL)) else { loop {} };
    // SAFETY: single-threaded firmware; STATE is only used here.
    let state = unsafe { &mut *addr_of_mut!(STATE) };
    if state_words_for::<f32>(&model) > state.len() {
        loop {}
    }
    let Ok(mut sensor) = Estimator::new(model, state) else { loop {} };
    loop {
        // SAFETY: volatile access to plain statics keeps the work from being optimized away.
        let x = unsafe { core::ptr::read_volatile(addr_of!(INPUT)) };
        let e = sensor.step(&x);
        unsafe { core::ptr::write_volatile(addr_of_mut!(OUTPUT), e.value) };
    }
}

#[panic_handler]
fn panic(_: &core::panic::PanicInfo<'_>) -> ! {
    loop {}
}
