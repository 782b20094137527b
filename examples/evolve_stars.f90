!> Evolve a list of stars with the Fortran module of hrtrail.
!>
!>   evolve_stars [GRID]      (default: the installed default grid)
!>
!> The invented scenario: the five stars of a planned survey field, "Lantern
!> Field 3", whose initial masses and metallicity the survey team assumed;
!> the program prints each star's phase, luminosity and temperature every
!> 500 Myr over 3 Gyr (one hrtf_evaluate call per epoch for the whole list),
!> then each star's timetable and remnant.
!> Build against an installed hrtrail:
!>   gfortran evolve_stars.f90 $(pkg-config --cflags --libs hrtrail-fortran)
program evolve_stars
  use, intrinsic :: iso_c_binding, only: c_double
  use hrtrail
  implicit none
  real(c_double), parameter :: masses(5) = [0.8_c_double, 1.0_c_double, 1.6_c_double, 2.4_c_double, 6.0_c_double]
  real(c_double), parameter :: z = 0.011_c_double
  type(hrt_grid_t) :: grid
  type(hrt_star_t) :: star
  type(hrt_state), allocatable :: states(:)
  type(hrt_phase_span), allocatable :: spans(:)
  real(c_double) :: ages(size(masses)), remnant_mass_msun
  character(len=4096) :: path
  character(len=256) :: msg
  character(len=44) :: phase
  integer :: stat, epoch, i, k, remnant

  if (command_argument_count() >= 1) then
     call get_command_argument(1, path)
     call hrtf_open(grid, trim(path), stat=stat, errmsg=msg)
  else
     call hrtf_open(grid, stat=stat, errmsg=msg)
  end if
  if (stat /= HRT_OK) then
     write (*, '(a)') 'cannot open the grid: ' // trim(msg)
     stop 1
  end if

  write (*, '(a,f6.4,a)') 'Lantern Field 3 (invented survey field), Z = ', z, ', hrtrail ' // hrtf_version()
  do epoch = 1, 6
     ages = 5e8_c_double * epoch
     call hrtf_evaluate(grid, masses, ages, z, states, stat, msg)
     write (*, '(/,a,es9.2,a)') 'age ', ages(1), ' yr'
     do i = 1, size(states)
        if (states(i)%status /= HRT_OK) then
           write (*, '(f6.2,a,a)') masses(i), ' Msun  ', hrtf_strerror(int(states(i)%status))
        else if (iand(states(i)%flags, HRT_FLAG_DARK) /= 0) then
           phase = hrtf_phase_name(int(states(i)%phase))
           write (*, '(f6.2,a,a)') masses(i), ' Msun  ', phase
        else
           phase = hrtf_phase_name(int(states(i)%phase))
           write (*, '(f6.2,a,a,a,f7.3,a,i6,a,f7.3,a)') masses(i), ' Msun  ', phase, '  log L =', &
                states(i)%log_l_lsun, '  Teff =', nint(10.0_c_double ** states(i)%log_teff_k), ' K  M =', &
                states(i)%mass_msun, ' Msun'
        end if
     end do
  end do

  write (*, '(/,a)') 'Timetables'
  do i = 1, size(masses)
     call hrtf_star_new(star, grid, masses(i), z)
     call hrtf_star_phases(star, spans)
     call hrtf_star_remnant(star, remnant, remnant_mass_msun)
     write (*, '(f6.2,a,a,a,f6.3,a)') masses(i), ' Msun: remnant ', hrtf_remnant_name(remnant), ' of ', &
          remnant_mass_msun, ' Msun'
     do k = 1, size(spans)
        phase = hrtf_phase_name(int(spans(k)%phase))
        write (*, '(8x,a,es11.3,a,es11.3,a)') phase, spans(k)%phase_start_yr, ' ..', spans(k)%phase_end_yr, ' yr'
     end do
     call hrtf_star_free(star)
  end do
  call hrtf_close(grid)
  deallocate (states, spans)
end program evolve_stars
