// Serial ports: listing (so a technician can tell the load cell from the
// extensometer by USB ids and serial number), opening with line settings, and
// the modem lines RTS/DTR. Real ports go through libserialport; pseudo-
// terminals (simulator `--pty` ports, socat links) go through plain termios,
// because libserialport 0.1.1 on Linux refuses a port without a sysfs entry.
// Errors are returned as std::error_code plus a readable detail string.
#pragma once

#include <optional>
#include <string>
#include <system_error>
#include <vector>

struct sp_port;

namespace tensile::drivers {

enum class Parity { none, odd, even };
enum class FlowControl { none, xonxoff, rtscts, dtrdsr };
enum class ModemLine { rts, dtr };

struct SerialSettings {
    int baud = 115200;
    int data_bits = 8;  // 5..8
    Parity parity = Parity::none;
    int stop_bits = 1;  // 1 or 2
    FlowControl flow = FlowControl::none;
    std::optional<bool> rts;  // level to set after opening; unset = leave as the driver has it
    std::optional<bool> dtr;
};

struct PortInfo {
    std::string path;
    std::string description;
    std::string transport;  // usb, native, bluetooth
    int usb_vid = -1;       // -1 when not USB
    int usb_pid = -1;
    std::string usb_serial;
    std::string usb_manufacturer;
    std::string usb_product;
};

// All ports libserialport can see. `error` is set and the list empty on failure.
std::vector<PortInfo> list_serial_ports(std::string& error);

// True when `path` (after following links) is a pseudo-terminal slave.
bool is_pseudo_terminal(const std::string& path);

// What a configured port name is, without following it: whether it is a link,
// the link's inode, change time and target. A pty that hung up never comes
// back under its name (the kernel hands the number to the next program that
// opens a pty), so only a link re-pointed since, a new name, may be opened
// again; comparing two of these tells whether that happened.
struct PortName {
    bool exists = false;
    bool link = false;
    unsigned long long inode = 0;
    long long changed_ns = 0;
    std::string target;
    friend bool operator==(const PortName&, const PortName&) = default;
};
PortName port_name(const std::string& path);

class SerialHandle {
public:
    SerialHandle() = default;
    SerialHandle(const SerialHandle&) = delete;
    SerialHandle& operator=(const SerialHandle&) = delete;
    SerialHandle(SerialHandle&& o) noexcept { *this = std::move(o); }
    SerialHandle& operator=(SerialHandle&& o) noexcept;
    ~SerialHandle() { close(); }

    std::error_code open(const std::string& path, const SerialSettings& s, std::string& detail);
    void close();
    [[nodiscard]] bool is_open() const { return fd_ >= 0; }
    [[nodiscard]] int fd() const { return fd_; }  // owned here; dup() it for Asio
    [[nodiscard]] bool via_termios() const { return port_ == nullptr && fd_ >= 0; }
    std::error_code set_line(ModemLine line, bool on, std::string& detail);

private:
    std::error_code open_termios(const std::string& path, const SerialSettings& s, std::string& detail);
    std::error_code open_libserialport(const std::string& path, const SerialSettings& s, std::string& detail);

    sp_port* port_ = nullptr;
    int fd_ = -1;
};

}  // namespace tensile::drivers
