//! Minimal firmware: load a model from flash, step the estimator in f32 on volatile inputs.
#![no_std]
#![no_main]

use core::ptr::{addr_of, addr_of_mut};

use cortex_m_rt::entry;
use regimix_runtime::{state_words, Estimator, ModelView};

static MODEL: &[u8] = include_bytes!("../../../docs/examples/tiny-model.rgmx");
static mut INPUT: f32 = 95.0;
static mut OUTPUT: f32 = 0.0;
static mut STATE: [f32; 64] = [0.0; 64];

#[entry]
fn main() -> ! {
    let Ok(model) = ModelView::parse(MODEL) else { loop {} };
    // SAFETY: single-threaded firmware; STATE is only used here.
    let state = unsafe { &mut *addr_of_mut!(STATE) };
    if state_words(&model) > state.len() {
        loop {}
    }
    let Ok(mut sensor) = Estimator::new(model, state) else { loop {} };
    loop {
        // SAFETY: volatile access to plain statics keeps the work from being optimized away.
        let x = unsafe { core::ptr::read_volatile(addr_of!(INPUT)) };
        let e = sensor.step(&[x]);
        unsafe { core::ptr::write_volatile(addr_of_mut!(OUTPUT), e.value) };
    }
}

#[panic_handler]
fn panic(_: &core::panic::PanicInfo<'_>) -> ! {
    loop {}
}
