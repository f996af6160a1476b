# Cross build for 32-bit ARM Linux, Debian armhf: ARMv7-A with hard float.
#
# Runs on Raspberry Pi 2 and newer with a 32-bit Debian 12 armhf system.
# Not for Pi 1 / Zero (ARMv6): 32-bit Raspberry Pi OS builds its own armhf
# for ARMv6, which this compiler does not target.  Prefer the arm64 build
# on anything that can run it.
#
# Same multiarch layout as aarch64-linux-gnu.cmake: compiler from
# gcc-arm-linux-gnueabihf + libc6-dev-armhf-cross, libraries as :armhf
# packages under /usr/lib/arm-linux-gnueabihf, target root is /.
#
#   cmake -S . -B build-armhf -DCMAKE_TOOLCHAIN_FILE=cmake/arm-linux-gnueabihf.cmake
set(CMAKE_SYSTEM_NAME Linux)
set(CMAKE_SYSTEM_PROCESSOR arm)
set(CMAKE_LIBRARY_ARCHITECTURE arm-linux-gnueabihf)
set(CMAKE_C_COMPILER arm-linux-gnueabihf-gcc)

# Only the target's .pc files (see aarch64-linux-gnu.cmake).
set(ENV{PKG_CONFIG_LIBDIR} "/usr/lib/arm-linux-gnueabihf/pkgconfig:/usr/share/pkgconfig")
set(ENV{PKG_CONFIG_PATH} "")

# No -L: libc6:armhf puts /lib/ld-linux-armhf.so.3 in place for qemu.
find_program(LATTICED_QEMU NAMES qemu-arm qemu-arm-static)
if(LATTICED_QEMU)
  set(CMAKE_CROSSCOMPILING_EMULATOR "${LATTICED_QEMU}")
endif()
