/*
 * Start-up of the C firmware on QEMU's microbit (Cortex-M0) and mps2-an386
 * (Cortex-M4F): vector table, RAM set-up, FPU on (M4F), semihosting
 * through newlib's rdimon, and a hard fault that exits with failure.
 */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>

extern uint32_t _sidata, _sdata, _edata, _sbss, _ebss, _estack;
extern int main(void);
extern void initialise_monitor_handles(void);

void Reset_Handler(void);
void Fault_Handler(void);

/* Newlib's exit runs the (empty) fini array: it needs these two. */
void _init(void) {}
void _fini(void) {}

__attribute__((section(".vectors"), used)) static void (*const vectors[16])(void) = {
    (void (*)(void))(&_estack), /* initial stack pointer */
    Reset_Handler,
    Fault_Handler, /* NMI */
    Fault_Handler, /* HardFault */
    Fault_Handler, /* MemManage (v7-M) */
    Fault_Handler, /* BusFault (v7-M) */
    Fault_Handler, /* UsageFault (v7-M) */
    0, 0, 0, 0,
    Fault_Handler, /* SVCall */
    Fault_Handler, /* DebugMonitor */
    0,
    Fault_Handler, /* PendSV */
    Fault_Handler, /* SysTick (its interrupt stays off) */
};

void Reset_Handler(void) {
    uint32_t *src = &_sidata, *dst = &_sdata;
    while (dst < &_edata) {
        *dst++ = *src++;
    }
    for (dst = &_sbss; dst < &_ebss; dst++) {
        *dst = 0;
    }
#if defined(__ARM_FP)
    /* CPACR: full access to CP10 and CP11 before any floating-point code. */
    *(volatile uint32_t *)0xE000ED88 |= 0xFu << 20;
    __asm volatile("dsb\n isb" ::: "memory");
#endif
    initialise_monitor_handles();
    exit(main());
}

void Fault_Handler(void) {
    puts("verdict: FAIL (fault)");
    exit(1);
}
