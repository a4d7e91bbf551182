// See serial_port.hpp.
#include "serial_port.hpp"

#include <fcntl.h>
#include <libserialport.h>
#include <sys/file.h>
#include <sys/ioctl.h>
#include <sys/stat.h>
#include <sys/sysmacros.h>
#include <termios.h>
#include <unistd.h>

#include <cerrno>
#include <climits>
#include <cstdlib>

namespace tensile::drivers {

namespace {

std::string take_sp_error() {
    char* m = sp_last_error_message();
    std::string s = m ? m : "unknown libserialport error";
    if (m) sp_free_error_message(m);
    return s;
}

std::string str(const char* s) { return s ? s : ""; }

speed_t speed_of(int baud) {
    switch (baud) {
        case 1200: return B1200;
        case 2400: return B2400;
        case 4800: return B4800;
        case 9600: return B9600;
        case 19200: return B19200;
        case 38400: return B38400;
        case 57600: return B57600;
        case 115200: return B115200;
        case 230400: return B230400;
        case 460800: return B460800;
        case 921600: return B921600;
        case 1000000: return B1000000;
        case 2000000: return B2000000;
        case 4000000: return B4000000;
        default: return B0;
    }
}

}  // namespace

std::vector<PortInfo> list_serial_ports(std::string& error) {
    std::vector<PortInfo> out;
    sp_port** list = nullptr;
    if (sp_list_ports(&list) != SP_OK) {
        error = take_sp_error();
        return out;
    }
    for (sp_port** p = list; *p; ++p) {
        PortInfo i;
        i.path = str(sp_get_port_name(*p));
        i.description = str(sp_get_port_description(*p));
        switch (sp_get_port_transport(*p)) {
            case SP_TRANSPORT_USB: {
                i.transport = "usb";
                int vid = -1, pid = -1;
                if (sp_get_port_usb_vid_pid(*p, &vid, &pid) == SP_OK) {
                    i.usb_vid = vid;
                    i.usb_pid = pid;
                }
                i.usb_serial = str(sp_get_port_usb_serial(*p));
                i.usb_manufacturer = str(sp_get_port_usb_manufacturer(*p));
                i.usb_product = str(sp_get_port_usb_product(*p));
                break;
            }
            case SP_TRANSPORT_BLUETOOTH: i.transport = "bluetooth"; break;
            default: i.transport = "native"; break;
        }
        out.push_back(std::move(i));
    }
    sp_free_port_list(list);
    return out;
}

bool is_pseudo_terminal(const std::string& path) {
    struct stat st {};
    if (::stat(path.c_str(), &st) != 0 || !S_ISCHR(st.st_mode)) return false;
    // Unix98 pty slaves use character majors 136–143 (Linux devices.txt).
    return major(st.st_rdev) >= 136 && major(st.st_rdev) <= 143;
}

PortName port_name(const std::string& path) {
    PortName n;
    struct stat st {};
    if (::lstat(path.c_str(), &st) != 0) return n;
    n.exists = true;
    n.link = S_ISLNK(st.st_mode);
    n.inode = st.st_ino;
    n.changed_ns = static_cast<long long>(st.st_ctim.tv_sec) * 1000000000LL + st.st_ctim.tv_nsec;
    if (n.link) {
        char target[PATH_MAX];
        const ssize_t len = ::readlink(path.c_str(), target, sizeof target);
        if (len > 0) n.target.assign(target, static_cast<std::size_t>(len));
    }
    return n;
}

SerialHandle& SerialHandle::operator=(SerialHandle&& o) noexcept {
    if (this != &o) {
        close();
        port_ = o.port_;
        fd_ = o.fd_;
        o.port_ = nullptr;
        o.fd_ = -1;
    }
    return *this;
}

void SerialHandle::close() {
    if (port_) {
        sp_close(port_);
        sp_free_port(port_);
        port_ = nullptr;
        fd_ = -1;
    } else if (fd_ >= 0) {
        ::close(fd_);
        fd_ = -1;
    }
}

std::error_code SerialHandle::open(const std::string& path, const SerialSettings& s, std::string& detail) {
    close();
    if (s.data_bits < 5 || s.data_bits > 8 || (s.stop_bits != 1 && s.stop_bits != 2)) {
        detail = "data bits must be 5–8 and stop bits 1 or 2";
        return std::make_error_code(std::errc::invalid_argument);
    }
    if (is_pseudo_terminal(path)) return open_termios(path, s, detail);
    return open_libserialport(path, s, detail);
}

std::error_code SerialHandle::open_libserialport(const std::string& path, const SerialSettings& s, std::string& detail) {
    sp_port* p = nullptr;
    if (sp_get_port_by_name(path.c_str(), &p) != SP_OK) {
        detail = path + ": " + take_sp_error();
        return std::make_error_code(std::errc::no_such_device);
    }
    port_ = p;
    auto fail = [&](const char* what) {
        detail = path + ": " + what + ": " + take_sp_error();
        close();
        return std::make_error_code(std::errc::io_error);
    };
    if (sp_open(p, SP_MODE_READ_WRITE) != SP_OK) return fail("cannot open");
    if (sp_set_baudrate(p, s.baud) != SP_OK) return fail("baud rate");
    if (sp_set_bits(p, s.data_bits) != SP_OK) return fail("data bits");
    const sp_parity par = s.parity == Parity::odd ? SP_PARITY_ODD : s.parity == Parity::even ? SP_PARITY_EVEN : SP_PARITY_NONE;
    if (sp_set_parity(p, par) != SP_OK) return fail("parity");
    if (sp_set_stopbits(p, s.stop_bits) != SP_OK) return fail("stop bits");
    const sp_flowcontrol fc = s.flow == FlowControl::xonxoff  ? SP_FLOWCONTROL_XONXOFF
                              : s.flow == FlowControl::rtscts ? SP_FLOWCONTROL_RTSCTS
                              : s.flow == FlowControl::dtrdsr ? SP_FLOWCONTROL_DTRDSR
                                                              : SP_FLOWCONTROL_NONE;
    if (sp_set_flowcontrol(p, fc) != SP_OK) return fail("flow control");
    int fd = -1;
    if (sp_get_port_handle(p, &fd) != SP_OK || fd < 0) return fail("no file descriptor");
    fd_ = fd;
    if (s.rts) {
        if (auto ec = set_line(ModemLine::rts, *s.rts, detail)) return close(), ec;
    }
    if (s.dtr) {
        if (auto ec = set_line(ModemLine::dtr, *s.dtr, detail)) return close(), ec;
    }
    return {};
}

std::error_code SerialHandle::open_termios(const std::string& path, const SerialSettings& s, std::string& detail) {
    const speed_t speed = speed_of(s.baud);
    if (speed == B0) {
        detail = path + ": baud rate " + std::to_string(s.baud) + " is not a standard termios rate";
        return std::make_error_code(std::errc::invalid_argument);
    }
    if (s.flow == FlowControl::dtrdsr) {
        detail = path + ": DTR/DSR flow control is not available through termios";
        return std::make_error_code(std::errc::invalid_argument);
    }
    const int fd = ::open(path.c_str(), O_RDWR | O_NOCTTY | O_NONBLOCK | O_CLOEXEC);
    if (fd < 0) {
        const int e = errno;
        detail = path + ": cannot open: " + std::generic_category().message(e);
        return {e, std::generic_category()};
    }
    fd_ = fd;
    // One reader per port. A second reader of a tty does not get a copy: each
    // read takes the bytes it finds, so two readers would each get part of
    // the stream and neither could tell (a source retrying a pty path whose
    // number another program now has did exactly that). The lock is advisory, so it
    // keeps our own readers apart; it goes with the descriptor.
    if (::flock(fd, LOCK_EX | LOCK_NB) != 0) {
        const int e = errno;
        detail = path + ": in use by another reader (" + std::generic_category().message(e) +
                 "); a port read twice gives each reader part of its bytes";
        close();
        return e == EWOULDBLOCK ? std::make_error_code(std::errc::device_or_resource_busy) : std::error_code{e, std::generic_category()};
    }
    termios t{};
    if (::tcgetattr(fd, &t) != 0) {
        const int e = errno;
        detail = path + ": not a terminal: " + std::generic_category().message(e);
        close();
        return {e, std::generic_category()};
    }
    ::cfmakeraw(&t);
    ::cfsetispeed(&t, speed);
    ::cfsetospeed(&t, speed);
    t.c_cflag &= ~static_cast<tcflag_t>(CSIZE | PARENB | PARODD | CSTOPB | CRTSCTS);
    t.c_cflag |= CLOCAL | CREAD;
    t.c_cflag |= s.data_bits == 5 ? CS5 : s.data_bits == 6 ? CS6 : s.data_bits == 7 ? CS7 : CS8;
    if (s.parity != Parity::none) t.c_cflag |= PARENB | (s.parity == Parity::odd ? PARODD : 0);
    if (s.stop_bits == 2) t.c_cflag |= CSTOPB;
    if (s.flow == FlowControl::rtscts) t.c_cflag |= CRTSCTS;
    t.c_iflag &= ~static_cast<tcflag_t>(IXON | IXOFF | IXANY);
    if (s.flow == FlowControl::xonxoff) t.c_iflag |= IXON | IXOFF;
    // On a pty the kernel keeps CS8 and no parity whatever we ask; harmless,
    // since no real line exists. On a real tty the same code sets them.
    t.c_cc[VMIN] = 1;
    t.c_cc[VTIME] = 0;
    if (::tcsetattr(fd, TCSANOW, &t) != 0) {
        const int e = errno;
        detail = path + ": cannot apply settings: " + std::generic_category().message(e);
        close();
        return {e, std::generic_category()};
    }
    // A pty has no modem lines; asking for RTS/DTR on one is reported, not ignored.
    if (s.rts) {
        if (auto ec = set_line(ModemLine::rts, *s.rts, detail)) return close(), ec;
    }
    if (s.dtr) {
        if (auto ec = set_line(ModemLine::dtr, *s.dtr, detail)) return close(), ec;
    }
    return {};
}

std::error_code SerialHandle::set_line(ModemLine line, bool on, std::string& detail) {
    const char* name = line == ModemLine::rts ? "RTS" : "DTR";
    if (fd_ < 0) {
        detail = std::string(name) + ": port not open";
        return std::make_error_code(std::errc::bad_file_descriptor);
    }
    if (port_) {
        const sp_return r = line == ModemLine::rts ? sp_set_rts(port_, on ? SP_RTS_ON : SP_RTS_OFF)
                                                   : sp_set_dtr(port_, on ? SP_DTR_ON : SP_DTR_OFF);
        if (r != SP_OK) {
            detail = std::string(name) + ": " + take_sp_error();
            return std::make_error_code(std::errc::io_error);
        }
        return {};
    }
    int bits = line == ModemLine::rts ? TIOCM_RTS : TIOCM_DTR;
    if (::ioctl(fd_, on ? TIOCMBIS : TIOCMBIC, &bits) != 0) {
        const int e = errno;
        detail = std::string(name) + ": " + std::generic_category().message(e);
        return {e, std::generic_category()};
    }
    return {};
}

}  // namespace tensile::drivers
